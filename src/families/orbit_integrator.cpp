#include "families/orbit_integrator.hpp"

#include <algorithm>
#include <boost/numeric/odeint.hpp>
#include <chrono>
#include <cmath>

namespace overtone::detail {

namespace {

using State = std::vector<double>;

// Right-hand side of the scaled equations of motion, the action integrand and, when a
// variational basis C is given, the variational equations X̂' = ω₀Ŷ, Ŷ' = −(CᵀHC/ω₀)X̂.
// State layout: â (m), b̂ (m), Ĵ (1), then X̂ and Ŷ (c × 2c each, column-major).
class ScaledEquations {
 public:
  ScaledEquations(const VibrationalSystem& system, const Eigen::MatrixXd& basis, const Eigen::MatrixXd* variational,
                  const OrbitScaling& scaling)
      : system_(system), basis_(basis), variational_(variational), scaling_(scaling),
        m_(static_cast<int>(basis.cols())), c_(variational ? static_cast<int>(variational->cols()) : 0) {}

  void operator()(const State& x, State& dxdt, double /*t*/) {
    const double omega = scaling_.angular_frequency;
    const double length = scaling_.length;
    Eigen::Map<const Eigen::VectorXd> a(x.data(), m_), b(x.data() + m_, m_);
    positions_.noalias() = basis_ * a;
    positions_ *= length;
    system_.gradient(positions_, gradient_);
    Eigen::Map<Eigen::VectorXd> da(dxdt.data(), m_), db(dxdt.data() + m_, m_);
    da = omega * b;
    db.noalias() = basis_.transpose() * gradient_;
    db *= -1.0 / (omega * length);
    dxdt[2 * m_] = omega * b.squaredNorm();
    if (variational_ == nullptr) return;
    system_.hessian_times(positions_, *variational_, hessian_columns_);
    projected_hessian_.noalias() = variational_->transpose() * hessian_columns_;
    symmetric_hessian_ = 0.5 * (projected_hessian_ + projected_hessian_.transpose());
    const Eigen::Index block = static_cast<Eigen::Index>(c_) * 2 * c_;
    const double* x_var = x.data() + 2 * m_ + 1;
    double* d_var = dxdt.data() + 2 * m_ + 1;
    Eigen::Map<const Eigen::MatrixXd> X(x_var, c_, 2 * c_), Y(x_var + block, c_, 2 * c_);
    Eigen::Map<Eigen::MatrixXd> dX(d_var, c_, 2 * c_), dY(d_var + block, c_, 2 * c_);
    dX = omega * Y;
    dY.noalias() = symmetric_hessian_ * X;
    dY *= -1.0 / omega;
  }

 private:
  const VibrationalSystem& system_;
  const Eigen::MatrixXd& basis_;
  const Eigen::MatrixXd* variational_;
  OrbitScaling scaling_;
  int m_, c_;
  Eigen::VectorXd positions_, gradient_;
  Eigen::MatrixXd hessian_columns_, projected_hessian_, symmetric_hessian_;
};

}  // namespace

OrbitIntegrator::OrbitIntegrator(const VibrationalSystem& system, Eigen::MatrixXd basis, double tolerance,
                                 double variational_tolerance, double escape_radius, std::size_t max_steps)
    : system_(system), basis_(std::move(basis)), tolerance_(tolerance), variational_tolerance_(variational_tolerance),
      escape_radius_(escape_radius), max_steps_(max_steps) {}

Eigen::VectorXd OrbitIntegrator::positions(const Eigen::VectorXd& scaled_state, const OrbitScaling& scaling) const {
  const int m = reduced_dimension();
  return scaling.length * (basis_ * scaled_state.head(m));
}

Eigen::VectorXd OrbitIntegrator::momenta(const Eigen::VectorXd& scaled_state, const OrbitScaling& scaling) const {
  const int m = reduced_dimension();
  return scaling.angular_frequency * scaling.length * (basis_ * scaled_state.segment(m, m));
}

Eigen::VectorXd OrbitIntegrator::scaled_velocity(const Eigen::VectorXd& scaled_state,
                                                 const OrbitScaling& scaling) const {
  const int m = reduced_dimension();
  Eigen::VectorXd gradient;
  system_.gradient(positions(scaled_state, scaling), gradient);
  Eigen::VectorXd velocity(2 * m);
  velocity.head(m) = scaling.angular_frequency * scaled_state.segment(m, m);
  velocity.tail(m) = -(basis_.transpose() * gradient) / (scaling.angular_frequency * scaling.length);
  return velocity;
}

IntegrationOutcome OrbitIntegrator::integrate(const IntegrationRequest& request, const OrbitScaling& scaling) {
  namespace odeint = boost::numeric::odeint;
  const auto started = std::chrono::steady_clock::now();
  const int m = reduced_dimension();
  const Eigen::MatrixXd* variational = request.variational_basis;
  const int c = variational ? static_cast<int>(variational->cols()) : 0;
  const std::size_t variational_size = static_cast<std::size_t>(4) * c * c;

  State x(static_cast<std::size_t>(2 * m + 1) + variational_size, 0.0);
  Eigen::Map<Eigen::VectorXd>(x.data(), 2 * m) = request.scaled_state;
  if (variational) {
    // X̂ = [I 0], Ŷ = [0 I]: the identity on span(C) × span(C).
    Eigen::Map<Eigen::MatrixXd> X(x.data() + 2 * m + 1, c, 2 * c);
    Eigen::Map<Eigen::MatrixXd> Y(x.data() + 2 * m + 1 + static_cast<Eigen::Index>(c) * 2 * c, c, 2 * c);
    X.setZero();
    Y.setZero();
    X.leftCols(c).setIdentity();
    Y.rightCols(c).setIdentity();
  }

  ScaledEquations equations(system_, basis_, variational, scaling);
  const double tolerance = variational ? variational_tolerance_ : tolerance_;
  auto stepper = odeint::make_controlled(tolerance, tolerance, odeint::runge_kutta_fehlberg78<State>());
  double& hint = variational ? variational_step_hint_ : step_hint_;

  IntegrationOutcome outcome;
  const double duration = request.duration;
  const int targets = std::max(1, request.sample_count);
  if (request.sample_count > 0) {
    outcome.samples.reserve(static_cast<std::size_t>(targets) + 1);
    outcome.samples.push_back(request.scaled_state);
  }
  double t = 0.0;
  double dt = hint > 0.0 ? hint * duration : duration / 64.0;
  const double finish_slack = 1e-13 * duration;  // round-off in accumulated times
  bool ok = true;
  for (int target_index = 1; target_index <= targets && ok; ++target_index) {
    const double target = duration * target_index / targets;
    while (target - t > finish_slack) {
      double trial = std::min(dt, target - t);
      const bool clipped = trial < dt;
      if (stepper.try_step(equations, x, t, trial) == odeint::success) {
        ++outcome.steps;
        if (!clipped) dt = trial;
        Eigen::Map<const Eigen::VectorXd> a(x.data(), m);
        const double radius = scaling.length * a.norm();
        if (!std::isfinite(radius) || !std::isfinite(x[2 * m])) {
          ok = false;
          outcome.failure = "the orbit's state became non-finite";
          break;
        }
        if (radius > escape_radius_) {
          ok = false;
          outcome.failure = "the orbit left the bound region (|q| grew past the escape radius)";
          break;
        }
      } else {
        ++outcome.rejected_steps;
        dt = trial;
      }
      if (outcome.steps + outcome.rejected_steps > max_steps_) {
        ok = false;
        outcome.failure = "the integrator needed more than the allowed number of steps";
        break;
      }
    }
    t = target;
    if (ok && request.sample_count > 0) outcome.samples.push_back(Eigen::Map<const Eigen::VectorXd>(x.data(), 2 * m));
  }
  if (ok && outcome.steps > 0) hint = dt / duration;

  outcome.ok = ok;
  outcome.scaled_state = Eigen::Map<const Eigen::VectorXd>(x.data(), 2 * m);
  outcome.momentum_square_integral = x[2 * m] * scaling.angular_frequency * scaling.length * scaling.length;
  if (variational) {
    Eigen::Map<const Eigen::MatrixXd> X(x.data() + 2 * m + 1, c, 2 * c);
    Eigen::Map<const Eigen::MatrixXd> Y(x.data() + 2 * m + 1 + static_cast<Eigen::Index>(c) * 2 * c, c, 2 * c);
    outcome.transition.resize(2 * c, 2 * c);
    outcome.transition.topRows(c) = X;
    outcome.transition.bottomRows(c) = Y;
  }
  outcome.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - started).count();

  counters_.steps += outcome.steps;
  counters_.rejected_steps += outcome.rejected_steps;
  if (variational == nullptr) {
    ++counters_.orbit_integrations;
  } else {
    ++counters_.variational_integrations;
    if (variational->cols() == static_cast<Eigen::Index>(system_.dimension()) && period_ > 0.0) {
      // The benchmark's unit of cost: one period with the whole-space variational equations.
      counters_.full_variational_seconds += outcome.seconds;
      counters_.full_variational_periods += duration / period_;
    }
  }
  return outcome;
}

}  // namespace overtone::detail
