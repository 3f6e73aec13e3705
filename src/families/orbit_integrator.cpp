#include "families/orbit_integrator.hpp"

#include <algorithm>
#include <boost/numeric/odeint.hpp>
#include <chrono>
#include <cmath>
#include <map>

#include "core/error.hpp"

namespace overtone::detail {

namespace {

using State = std::vector<double>;

// Right-hand side of the scaled equations of motion, the action integrand and, when a
// variational basis C is given, the variational equations X̂' = ω₀Ŷ, Ŷ' = −(CᵀHC/ω₀)X̂.
// State layout: â (m), b̂ (m), Ĵ (1), then X̂ and Ŷ (c × 2c each, column-major).
class ScaledEquations {
 public:
  ScaledEquations(const VibrationalSystem& system, const Eigen::MatrixXd& basis,
                  const Eigen::MatrixXd* variational, const OrbitScaling& scaling)
      : system_(system),
        basis_(basis),
        variational_(variational),
        scaling_(scaling),
        m_(static_cast<int>(basis.cols())),
        c_(variational ? static_cast<int>(variational->cols()) : 0) {}

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

// The states at count+1 equally spaced times over [times.front(), times.back()] from the
// recorded steps: on each step interval, the Hermite polynomial (values and first
// derivatives) through the two step ends and one neighbour on each side where there is
// one (degree 7). Its error, ~(ωh)⁸/8! of the state's scale for steps of ωh ≲ 0.3, is far
// below the integration tolerance.
std::vector<Eigen::VectorXd> hermite_samples(const std::vector<double>& times,
                                             const std::vector<Eigen::VectorXd>& states,
                                             const std::vector<Eigen::VectorXd>& derivatives, int count) {
  const int last = static_cast<int>(times.size()) - 1;
  std::vector<Eigen::VectorXd> samples;
  samples.reserve(static_cast<std::size_t>(count) + 1);
  samples.push_back(states.front());
  constexpr int max_nodes = 4;
  double z[2 * max_nodes];
  Eigen::VectorXd coefficients[2 * max_nodes];
  int interval = 0;
  const double start = times.front(), span = times.back() - times.front();
  for (int s = 1; s < count; ++s) {
    const double t = start + span * s / count;
    while (interval < last - 1 && times[static_cast<std::size_t>(interval) + 1] <= t) ++interval;
    const int first = std::max(0, interval - 1);
    const int after = std::min(last, interval + 2);
    const int nodes = after - first + 1;
    const int size = 2 * nodes;
    for (int j = 0; j < size; ++j) {
      const auto k = static_cast<std::size_t>(first + j / 2);
      z[j] = times[k];
      coefficients[j] = states[k];
    }
    // Divided differences with every node doubled: at the first level a doubled node
    // takes the derivative.
    for (int level = 1; level < size; ++level)
      for (int j = size - 1; j >= level; --j) {
        if (level == 1 && j % 2 == 1)
          coefficients[j] = derivatives[static_cast<std::size_t>(first + j / 2)];
        else
          coefficients[j] = (coefficients[j] - coefficients[j - 1]) / (z[j] - z[j - level]);
      }
    Eigen::VectorXd value = coefficients[size - 1];
    for (int j = size - 2; j >= 0; --j) value = value * (t - z[j]) + coefficients[j];
    samples.push_back(std::move(value));
  }
  samples.push_back(states.back());
  return samples;
}

}  // namespace

OrbitIntegrator::OrbitIntegrator(const VibrationalSystem& system, Eigen::MatrixXd basis, double tolerance,
                                 double variational_tolerance, double escape_radius, std::size_t max_steps)
    : system_(system),
      basis_(std::move(basis)),
      tolerance_(tolerance),
      variational_tolerance_(variational_tolerance),
      escape_radius_(escape_radius),
      max_steps_(max_steps) {}

Eigen::VectorXd OrbitIntegrator::positions(const Eigen::VectorXd& scaled_state,
                                           const OrbitScaling& scaling) const {
  const int m = reduced_dimension();
  return scaling.length * (basis_ * scaled_state.head(m));
}

Eigen::VectorXd OrbitIntegrator::momenta(const Eigen::VectorXd& scaled_state,
                                         const OrbitScaling& scaling) const {
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

IntegrationOutcome OrbitIntegrator::integrate(const IntegrationRequest& request,
                                              const OrbitScaling& scaling) {
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
  const double tolerance =
      variational ? variational_tolerance_ : (request.tolerance > 0.0 ? request.tolerance : tolerance_);
  auto stepper = odeint::make_controlled(tolerance, tolerance, odeint::runge_kutta_fehlberg78<State>());
  double& hint = variational ? variational_step_hint_ : step_hint_;

  IntegrationOutcome outcome;
  const double duration = request.duration;
  const bool sampling = request.sample_count > 0;
  // Sampled integrations record every accepted state with its derivative and interpolate
  // the samples afterwards, so that the step size is never cut to hit a sample time.
  std::vector<double> step_times;
  std::vector<Eigen::VectorXd> step_states, step_derivatives;
  double t = 0.0;
  double dt = hint > 0.0 ? hint * duration : duration / 64.0;
  const double finish_slack = 1e-13 * duration;  // round-off in accumulated times
  bool ok = true;
  State dxdt(x.size());
  auto refused = [&](const Error& refusal) {
    // A potential that refuses a point (the hole guard of a Taylor expansion that has
    // turned over) ends this orbit like an escape, with the potential's reason.
    ok = false;
    outcome.failure =
        std::string("escape: the potential refused to evaluate the orbit (") + refusal.what() + ")";
  };
  auto record = [&] {
    if (!sampling) return;
    step_times.push_back(t);
    step_states.push_back(Eigen::Map<const Eigen::VectorXd>(x.data(), 2 * m));
    step_derivatives.push_back(Eigen::Map<const Eigen::VectorXd>(dxdt.data(), 2 * m));
  };
  try {
    equations(x, dxdt, t);
  } catch (const Error& refusal) {
    refused(refusal);
  }
  if (ok) record();
  const bool checkpointing = request.checkpoint > 0.0 && request.checkpoint < duration;
  bool checkpoint_reached = !checkpointing;
  while (ok && duration - t > finish_slack) {
    const double stop = checkpoint_reached ? duration : request.checkpoint;
    // Two even steps instead of a full one and a sliver: the samples are interpolated
    // between step ends, which nearly coincident ends would make ill-conditioned.
    double trial = stop - t <= dt ? stop - t : (stop - t < 1.5 * dt ? 0.5 * (stop - t) : dt);
    const bool clipped = trial < dt;
    odeint::controlled_step_result step_result = odeint::fail;
    try {
      // The derivative at the current state serves every trial from it (it is the first
      // stage of each), so a rejected step costs one evaluation less.
      step_result = stepper.try_step(equations, x, dxdt, t, trial);
      if (step_result == odeint::success) equations(x, dxdt, t);
    } catch (const Error& refusal) {
      refused(refusal);
      break;
    }
    if (step_result == odeint::success) {
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
      record();
      if (!checkpoint_reached && request.checkpoint - t <= finish_slack) {
        checkpoint_reached = true;
        outcome.checkpoint_state = Eigen::Map<const Eigen::VectorXd>(x.data(), 2 * m);
        outcome.checkpoint_momentum_square_integral =
            x[2 * m] * scaling.angular_frequency * scaling.length * scaling.length;
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
  if (ok && sampling) {
    step_times.back() = duration;  // within finish_slack of it
    outcome.samples = hermite_samples(step_times, step_states, step_derivatives, request.sample_count);
    outcome.step_states = std::move(step_states);
  }
  if (ok && outcome.steps > 0) hint = dt / duration;

  outcome.ok = ok;
  outcome.scaled_state = Eigen::Map<const Eigen::VectorXd>(x.data(), 2 * m);
  outcome.momentum_square_integral = x[2 * m] * scaling.angular_frequency * scaling.length * scaling.length;
  if (variational) {
    Eigen::Map<const Eigen::MatrixXd> X(x.data() + 2 * m + 1, c, 2 * c);
    Eigen::Map<const Eigen::MatrixXd> Y(x.data() + 2 * m + 1 + static_cast<Eigen::Index>(c) * 2 * c, c,
                                        2 * c);
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

bool interpolated_transition(const VibrationalSystem& system, const InterpolatedTransitionRequest& request,
                             Eigen::MatrixXd& transition, std::size_t& steps) {
  namespace odeint = boost::numeric::odeint;
  transition.resize(0, 0);
  steps = 0;
  const auto& samples = *request.positions;
  const int count = static_cast<int>(samples.size());
  const Eigen::MatrixXd& basis = *request.variational_basis;
  const int c = static_cast<int>(basis.cols());
  constexpr int stencil = 8;  // 8-point Lagrange: error ~ (ωh)⁸/8! of the Hessian's scale
  constexpr int before = stencil / 2 - 1;
  const double node_spacing = request.spacing * request.node_stride;
  const int last_interval = static_cast<int>(std::ceil(request.duration / node_spacing - 1e-9));
  const int first_node = -before - 1,
            last_node = last_interval + stencil / 2 + 1;  // one spare each side for the test
  if (count < 2 * stencil) return false;

  // Nodes beyond the period wrap onto earlier samples (the orbit is periodic); each
  // sample's Hessian is evaluated once.
  std::vector<Eigen::MatrixXd> nodes;
  nodes.reserve(static_cast<std::size_t>(last_node - first_node + 1));
  std::map<int, std::size_t> evaluated;
  Eigen::MatrixXd columns;
  for (int k = first_node; k <= last_node; ++k) {
    const int index = ((k * request.node_stride) % count + count) % count;
    const auto found = evaluated.find(index);
    if (found != evaluated.end()) {
      nodes.push_back(nodes[found->second]);
      continue;
    }
    system.hessian_times(samples[static_cast<std::size_t>(index)], basis, columns);
    Eigen::MatrixXd projected = basis.transpose() * columns;
    evaluated[index] = nodes.size();
    nodes.push_back(0.5 * (projected + projected.transpose()));
  }
  auto node = [&](int k) -> const Eigen::MatrixXd& {
    return nodes[static_cast<std::size_t>(k - first_node)];
  };
  auto weights = [](double x, int start, const std::vector<int>& abscissae, std::vector<double>& w) {
    w.assign(abscissae.size(), 1.0);
    for (std::size_t i = 0; i < abscissae.size(); ++i)
      for (std::size_t j = 0; j < abscissae.size(); ++j)
        if (i != j) w[i] *= (x - (start + abscissae[j])) / static_cast<double>(abscissae[i] - abscissae[j]);
  };

  // Leave-one-out test at every node with four neighbours on each side: predict it from
  // them (an estimate, pessimistic by about (9/4)^4, of the error between nodes).
  double scale = 0.0;
  for (const auto& h : nodes) scale = std::max(scale, h.cwiseAbs().maxCoeff());
  if (!(scale > 0.0) || !std::isfinite(scale)) return false;
  const std::vector<int> around = {-4, -3, -2, -1, 1, 2, 3, 4};
  std::vector<double> w;
  for (int k = first_node + 4; k <= last_node - 4; ++k) {
    weights(static_cast<double>(k), k, around, w);
    Eigen::MatrixXd predicted = Eigen::MatrixXd::Zero(c, c);
    for (std::size_t i = 0; i < around.size(); ++i) predicted += w[i] * node(k + around[i]);
    if ((predicted - node(k)).cwiseAbs().maxCoeff() > request.interpolation_tolerance * scale) return false;
  }

  using State = std::vector<double>;
  const double omega = request.angular_frequency;
  const Eigen::Index block = static_cast<Eigen::Index>(c) * 2 * c;
  const std::vector<int> offsets = {0, 1, 2, 3, 4, 5, 6, 7};
  Eigen::MatrixXd hessian(c, c);
  std::vector<double> lagrange;
  auto equations = [&](const State& x, State& dxdt, double t) {
    const double position = t / node_spacing;
    const int start = std::max(first_node + 1, std::min(static_cast<int>(std::floor(position)) - before,
                                                        last_node - 1 - (stencil - 1)));
    weights(position, start, offsets, lagrange);
    hessian.setZero();
    for (int i = 0; i < stencil; ++i) hessian += lagrange[static_cast<std::size_t>(i)] * node(start + i);
    Eigen::Map<const Eigen::MatrixXd> X(x.data(), c, 2 * c), Y(x.data() + block, c, 2 * c);
    Eigen::Map<Eigen::MatrixXd> dX(dxdt.data(), c, 2 * c), dY(dxdt.data() + block, c, 2 * c);
    dX = omega * Y;
    dY.noalias() = hessian * X;
    dY *= -1.0 / omega;
  };
  State x(static_cast<std::size_t>(2 * block), 0.0);
  {
    Eigen::Map<Eigen::MatrixXd> X(x.data(), c, 2 * c), Y(x.data() + block, c, 2 * c);
    X.leftCols(c).setIdentity();
    Y.rightCols(c).setIdentity();
  }
  auto stepper =
      odeint::make_controlled(request.tolerance, request.tolerance, odeint::runge_kutta_fehlberg78<State>());
  steps = odeint::integrate_adaptive(stepper, equations, x, 0.0, request.duration, node_spacing);
  transition.resize(2 * c, 2 * c);
  transition.topRows(c) = Eigen::Map<const Eigen::MatrixXd>(x.data(), c, 2 * c);
  transition.bottomRows(c) = Eigen::Map<const Eigen::MatrixXd>(x.data() + block, c, 2 * c);
  return transition.allFinite();
}

}  // namespace overtone::detail
