#include "families/periodic_orbits.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <memory>
#include <numeric>
#include <optional>

#include "core/error.hpp"
#include "core/option_checks.hpp"
#include "core/units.hpp"
#include "families/orbit_integrator.hpp"

namespace overtone {

// Names in the order of the enumerations.
const char* to_string(ContinuationStatus status) {
  static constexpr const char* names[] = {"reached_energy_max", "escaped",      "step_too_small",
                                          "point_limit",        "start_failed", "turned_back",
                                          "rejoined_parent"};
  return names[static_cast<std::size_t>(status)];
}

const char* to_string(FamilyEventKind kind) {
  static constexpr const char* names[] = {
      "fold",         "stability_lost",      "stability_gained",    "period_doubling",
      "branch_point", "instability_changed", "resonance_encounter", "escape"};
  return names[static_cast<std::size_t>(kind)];
}

void ContinuationOptions::validate() const {
  using namespace option_checks;
  const char* owner = "continuation";
  require_positive(owner, "energy_max", energy_max);
  require_in_open(owner, "start_energy_fraction", start_energy_fraction, 0.0, 1.0);
  require(integration_tolerance >= 1e-15 && integration_tolerance <= 1e-6, owner, "integration_tolerance",
          "a number in [1e-15, 1e-6]", integration_tolerance);
  require(variational_tolerance >= integration_tolerance && variational_tolerance <= 1e-6, owner,
          "variational_tolerance", "a number between integration_tolerance and 1e-6", variational_tolerance);
  require_in_open(owner, "closure_tolerance", closure_tolerance, 0.0, 1e-2);
  require(closure_tolerance >= 10.0 * integration_tolerance, owner, "closure_tolerance",
          "at least 10 times integration_tolerance (Newton cannot beat the integrator)", closure_tolerance);
  require(newton_tolerance_max >= integration_tolerance && newton_tolerance_max <= 1e-6, owner,
          "newton_tolerance_max", "a number between integration_tolerance and 1e-6", newton_tolerance_max);
  require_at_least(owner, "max_newton_iterations", max_newton_iterations, 2);
  require_positive(owner, "min_step", min_step);
  require(initial_step >= min_step && initial_step <= max_step, owner, "initial_step",
          "a number between min_step and max_step", initial_step);
  require_in_left_open(owner, "max_energy_step_fraction", max_energy_step_fraction, 0.0, 1.0);
  require_in_left_open(owner, "straight_energy_step_fraction", straight_energy_step_fraction, 0.0, 1.0);
  require_in_open(owner, "backbone_tolerance", backbone_tolerance, 0.0, 0.1);
  require_at_least(owner, "max_points", max_points, 2);
  require_at_least(owner, "variational_nodes_per_period", variational_nodes_per_period, 0);
  require_at_least(owner, "samples_per_period", samples_per_period, 16);
  require(partner_resolution >= 0.0 && partner_resolution < 0.5, owner, "partner_resolution",
          "a number in [0, 0.5)", partner_resolution);
  require_in_open(owner, "stability_tolerance", stability_tolerance, 0.0, 0.1);
  require(escape_radius_factor > 1.0, owner, "escape_radius_factor", "a number above 1",
          escape_radius_factor);
  require(max_period_factor > 1.0, owner, "max_period_factor", "a number above 1", max_period_factor);
  require(max_integration_steps >= 100, owner, "max_integration_steps", "a whole number >= 100",
          max_integration_steps);
  require_at_least(owner, "ladder_max_level", ladder_max_level, 0);
  require(ladder_tolerance >= 0.0 && ladder_tolerance < 0.1, owner, "ladder_tolerance",
          "a number in [0, 0.1)", ladder_tolerance);
}

namespace {

// A point of the family in the system's units, reduced coordinates.
struct Unknowns {
  Eigen::VectorXd a;  // Bᵀq(0)
  Eigen::VectorXd b;  // Bᵀp(0)
  double period = 0.0;
  double energy = 0.0;
};

struct CorrectorSetup {
  double length = 1.0;      // ℓ of the scaling used throughout this corrector
  double time_scale = 1.0;  // t_s: the period enters as τ = T / t_s
  bool fixed_energy = true;
  double target_energy = 0.0;
  Eigen::VectorXd phase_reference;  // scaled (â, b̂)
  Eigen::VectorXd phase_direction;  // unit, 2m
  Eigen::VectorXd tangent;          // scaled (â, b̂, τ, Ê): arclength mode only
  Eigen::VectorXd predicted;
  // Integrate the last (full-accuracy) iteration over the whole period with samples, so
  // that a converged orbit comes with its verification pass.
  bool verify = false;
};

struct CorrectorOutcome {
  bool converged = false;
  std::string failure;
  bool escaped = false;
  Unknowns solution;
  double action = 0.0;  // J of the converged orbit
  int iterations = 0;
  int variational_integrations = 0;
  int orbit_integrations = 0;
  // setup.verify: the converged iteration's whole-period sampled integration and its scaling.
  std::shared_ptr<const detail::IntegrationOutcome> verification;
  detail::OrbitScaling verification_scaling;
};

// Everything that is computed once per accepted point beyond the corrector.
struct PointAnalysis {
  Eigen::MatrixXd reduced_transition;  // Φ̂ on F × F over T/r
  // Smallest distance of a non-neutral multiplier from ±1 (∞ without them).
  double collision_distance = std::numeric_limits<double>::infinity();
  bool ok = true;
  std::string failure;
};

double cubic_hermite_component(double v0, double d0, double v1, double d1, double h, double s) {
  const double s2 = s * s, s3 = s2 * s;
  return (2 * s3 - 3 * s2 + 1) * v0 + (s3 - 2 * s2 + s) * h * d0 + (-2 * s3 + 3 * s2) * v1 +
         (s3 - s2) * h * d1;
}

// Largest value over t of a norm of a vector function sampled at equally spaced times
// (spacing h, periodic, values[N] == values[0] not required) with known derivatives:
// the best sample is refined on the cubic Hermite interpolant of its two neighbouring
// intervals by golden-section search. The norm is the largest Euclidean norm of the
// consecutive blocks of block_size components (block_size = length: plain norm).
double refined_maximum(const std::vector<Eigen::VectorXd>& values,
                       const std::vector<Eigen::VectorXd>& derivatives, double h, int block_size) {
  const int count = static_cast<int>(values.size());
  if (count == 0) return 0.0;  // no samples: no amplitude (and no neighbour indices modulo 0)
  auto block_norm = [block_size](const Eigen::VectorXd& v) {
    double best = 0.0;
    for (Eigen::Index start = 0; start + block_size <= v.size(); start += block_size)
      best = std::max(best, v.segment(start, block_size).norm());
    return best;
  };
  int best_index = 0;
  double best_value = -1.0;
  for (int j = 0; j < count; ++j) {
    const double value = block_norm(values[j]);
    if (value > best_value) {
      best_value = value;
      best_index = j;
    }
  }
  // On [j−1, j+1] parametrized by x ∈ [−1, 1].
  const int previous = (best_index - 1 + count) % count;
  const int next = (best_index + 1) % count;
  Eigen::VectorXd buffer(values[best_index].size());
  auto interpolated = [&](double x) {
    const int left = x < 0.0 ? previous : best_index;
    const int right = x < 0.0 ? best_index : next;
    const double s = x < 0.0 ? x + 1.0 : x;
    for (Eigen::Index k = 0; k < buffer.size(); ++k)
      buffer(k) = cubic_hermite_component(values[left](k), derivatives[left](k), values[right](k),
                                          derivatives[right](k), h, s);
    return block_norm(buffer);
  };
  // Coarse scan, then golden section around the best scan point.
  constexpr int scan = 16;
  double best_x = 0.0;
  for (int i = -scan; i <= scan; ++i) {
    const double x = static_cast<double>(i) / scan;
    const double value = interpolated(x);
    if (value > best_value) {
      best_value = value;
      best_x = x;
    }
  }
  const double golden = 0.5 * (std::sqrt(5.0) - 1.0);
  double lo = std::max(-1.0, best_x - 1.0 / scan), hi = std::min(1.0, best_x + 1.0 / scan);
  double x1 = hi - golden * (hi - lo), x2 = lo + golden * (hi - lo);
  double f1 = interpolated(x1), f2 = interpolated(x2);
  for (int iteration = 0; iteration < 40; ++iteration) {
    if (f1 < f2) {
      lo = x1;
      x1 = x2;
      f1 = f2;
      x2 = lo + golden * (hi - lo);
      f2 = interpolated(x2);
    } else {
      hi = x2;
      x2 = x1;
      f2 = f1;
      x1 = hi - golden * (hi - lo);
      f1 = interpolated(x1);
    }
  }
  return std::max({best_value, f1, f2});
}

Eigen::MatrixXd phase_space_block(const Eigen::MatrixXd& m) {
  const Eigen::Index n = m.rows(), c = m.cols();
  Eigen::MatrixXd block = Eigen::MatrixXd::Zero(2 * n, 2 * c);
  block.topLeftCorner(n, c) = m;
  block.bottomRightCorner(n, c) = m;
  return block;
}

// Where a stability event can happen: period doubling and branch points need a
// non-neutral multiplier at −1 or +1, a real pair that returns to the unit circle meets
// there too. (Collisions elsewhere on the circle, between multipliers of many modes, are
// too common in a molecule to steer the step; they are still detected between points.)
double collision_distance(const std::vector<std::complex<double>>& multipliers) {
  double distance = std::numeric_limits<double>::infinity();
  for (const auto& mu : multipliers) distance = std::min({distance, std::abs(mu - 1.0), std::abs(mu + 1.0)});
  return distance;
}

class FamilySolver {
 public:
  FamilySolver(const VibrationalSystem& system, const FamilySeed& seed, const ContinuationOptions& options);
  ContinuationResult run();
  OrbitProbe probe(const OrbitPoint& near, double energy);

 private:
  double length_for(double energy) const { return std::sqrt(2.0 * energy) / omega_; }
  double energy_scale(double length) const { return omega_ * omega_ * length * length; }
  Eigen::VectorXd scaled_state(const Unknowns& u, double length) const;
  Unknowns unscaled(const Eigen::VectorXd& state, double period, double energy, double length) const;
  double total_energy(const Eigen::VectorXd& scaled, double length) const;

  // Cost of the point being computed: corrector work since the last accepted point.
  struct PointCost {
    int iterations = 0, variational = 0, orbits = 0;
    SystemEvaluationCounts counts_at_start;
    std::chrono::steady_clock::time_point started;
  };
  ContinuationResult finish(ContinuationResult& result, ContinuationStatus status, std::string message);
  ContinuationResult finish_after_failure(ContinuationResult& result, const std::string& failure,
                                          bool escape);
  ContinuationResult finish_at_energy_max(ContinuationResult& result, const PointCost& cost);
  // The corrector set-up for an orbit at a fixed energy, phase anchored at `reference`.
  CorrectorSetup fixed_energy_setup(const Unknowns& reference, double energy) const;
  // First point: Newton from the linear orbit at a small energy (smaller on each retry).
  bool start(ContinuationResult& result, std::string& failure);
  // First point of a born family: the corrector at a fixed distance along the branch
  // direction from the bifurcation (FamilySeed::branch), energy free.
  bool start_on_branch(ContinuationResult& result, std::string& failure);
  CorrectorOutcome continuation_step(double step, double& trial_step, bool& final_step);
  double next_step(double step, double trial_step, int iterations) const;
  // Records a converged orbit: analysis, point, oriented tangent. False when the analysis
  // integration fails.
  bool accept(const CorrectorOutcome& corrected, const PointCost& cost, ContinuationResult& result);
  // The first point of a family (from the minimum or from a birth): recorded when the
  // corrector converged and its analysis integrates; otherwise failure says why.
  bool accept_first(const CorrectorOutcome& corrected, PointCost& cost, ContinuationResult& result,
                    std::string& failure);
  CorrectorOutcome correct(const Unknowns& guess, const CorrectorSetup& setup);
  // Broyden's rank-one correction of hint_ from the shooting residual's change along the
  // last chord step.
  void broyden_update(const Eigen::VectorXd& shooting_change, const Eigen::VectorXd& previous_step,
                      const Eigen::VectorXd& previous_time_column);
  // The corrector's Jacobian: shooting rows from hint_, energy, phase and arclength rows.
  void fill_jacobian(const Eigen::VectorXd& end_state, const Eigen::VectorXd& y0, const CorrectorSetup& setup,
                     const detail::OrbitScaling& scaling, Eigen::MatrixXd& jacobian) const;
  // How accurately a corrector iteration integrates, from the residual expected there.
  struct IterationPlan {
    double tolerance = 0.0;  // of the orbit integration
    bool accurate = false;   // at integration_tolerance: convergence may be declared
    bool verifying = false;  // the whole period with samples (the verification pass)
  };
  IterationPlan plan_iteration(bool fresh, double expected_norm, bool verify) const;
  // One corrector iteration's integration: a 1/r period (the whole period with samples
  // when verifying), with variational equations when the Jacobian is refreshed.
  detail::IntegrationRequest iteration_request(const Eigen::VectorXd& y0, double period,
                                               const IterationPlan& plan, bool fresh) const;
  static double expected_next_norm(double norm, double previous_norm);
  // `verified`: the corrector's whole-period sampled run of this orbit, if it made one.
  bool analyze_point(const Unknowns& u, const CorrectorOutcome& verified, OrbitPoint& point,
                     PointAnalysis& analysis);
  Eigen::VectorXd tangent_at(const Unknowns& u, const Eigen::MatrixXd& reduced_transition, double length,
                             double time_scale) const;
  // The period enters the unknowns relative to the current one, so that an arclength
  // step changes it by a bounded fraction even where it diverges (near a separatrix).
  static double time_scale_for(double period) { return period / (2.0 * units::pi); }
  // monodromy in scaled coordinates at the orbit's initial state (q, p).
  // Returns the collision distance of the non-neutral multipliers (see PointAnalysis).
  double classify_multipliers(const Eigen::MatrixXd& monodromy, const Eigen::VectorXd& q,
                              const Eigen::VectorXd& p, double length, OrbitPoint& point) const;
  // The energy step allowed from the last accepted point (step control by curvature and
  // nearby events, ContinuationOptions::straight_energy_step_fraction).
  double energy_step_cap() const;
  void detect_events(ContinuationResult& result) const;
  void build_ladder(ContinuationResult& result);
  void fill_converted(OrbitPoint& point) const;
  std::string energy_text(double energy) const {
    return fmt::format("{:.6g} {}", energy * units_.cm1_per_energy, units_.energy_label);
  }

  const VibrationalSystem& system_;
  const FamilySeed& seed_;
  const ContinuationOptions& options_;
  UnitConventions units_;
  int n_ = 0, m_ = 0, r_ = 1;
  double omega_ = 1.0;
  Eigen::MatrixXd basis_;        // B
  Eigen::MatrixXd shift_full_;   // D(g), n × n
  Eigen::MatrixXd shift_phase_;  // blockdiag(Bᵀ D B, Bᵀ D B), 2m × 2m
  Eigen::MatrixXd identity_n_;
  int sample_count_ = 128;
  double escape_radius_ = 0.0;
  std::optional<detail::OrbitIntegrator> integrator_;
  Eigen::MatrixXd hint_;  // Φ̂ (2m × 2m) for chord steps
  bool have_hint_ = false;
  std::vector<Unknowns> accepted_;  // parallel to result points
  std::vector<Eigen::MatrixXd> accepted_transitions_;
  std::vector<double> accepted_actions_;
  struct StepMemory {
    double energy, angular_frequency, collision_distance;
  };
  std::vector<StepMemory> recent_;  // the last three accepted points, oldest first
  std::string last_integration_failure_;
  Eigen::VectorXd tangent_;  // unit tangent at the last accepted point, scaled (â, b̂, τ, Ê)
  double tangent_length_ = 1.0;
  double tangent_time_scale_ = 1.0;
  std::chrono::steady_clock::time_point started_;
  SystemEvaluationCounts counts_before_;    // this thread's counts when run() started
  mutable Eigen::MatrixXd last_monodromy_;  // scaled, of the last classified point (probe())
};

FamilySolver::FamilySolver(const VibrationalSystem& system, const FamilySeed& seed,
                           const ContinuationOptions& options)
    : system_(system), seed_(seed), options_(options), units_(system.units()) {
  options.validate();
  n_ = system.dimension();
  if (n_ < 1) throw Error(fmt::format("vibrational system dimension must be at least 1, got {}", n_));
  if (seed.linear_mode.size() != n_)
    throw Error(fmt::format("family seed linear mode has length {}, expected the system dimension {}",
                            seed.linear_mode.size(), n_));
  if (!(seed.angular_frequency > 0.0) || !std::isfinite(seed.angular_frequency))
    throw Error(
        fmt::format("family seed angular frequency must be positive, got {}", seed.angular_frequency));
  omega_ = seed.angular_frequency;
  constexpr double structure_tolerance = 1e-8;  // round-off in bases built by eigensolvers
  basis_ = seed.invariant_basis.size() == 0 ? Eigen::MatrixXd::Identity(n_, n_) : seed.invariant_basis;
  if (basis_.rows() != n_ || basis_.cols() < 1 || basis_.cols() > n_)
    throw Error(fmt::format("family seed invariant basis is {}x{}, expected {} rows and 1..{} columns",
                            basis_.rows(), basis_.cols(), n_, n_));
  m_ = static_cast<int>(basis_.cols());
  const double orthonormality =
      (basis_.transpose() * basis_ - Eigen::MatrixXd::Identity(m_, m_)).cwiseAbs().maxCoeff();
  if (orthonormality > structure_tolerance)
    throw Error(fmt::format("family seed invariant basis is not orthonormal (largest defect {:.3g})",
                            orthonormality));
  const double mode_norm = seed.linear_mode.norm();
  if (!(mode_norm > 0.0)) throw Error("family seed linear mode is zero");
  const Eigen::VectorXcd outside = seed.linear_mode - basis_ * (basis_.transpose() * seed.linear_mode);
  constexpr double subspace_tolerance = 1e-4;  // seeds from numerically symmetric molecules are projected
  if (outside.norm() > subspace_tolerance * mode_norm)
    throw Error(
        fmt::format("family seed linear mode lies outside its invariant subspace (relative part {:.3g})",
                    outside.norm() / mode_norm));
  r_ = seed.shift_denominator;
  if (r_ < 1) throw Error(fmt::format("family seed shift denominator must be at least 1, got {}", r_));
  identity_n_ = Eigen::MatrixXd::Identity(n_, n_);
  if (seed.shift_matrix.size() == 0) {
    if (r_ != 1) throw Error(fmt::format("family seed has shift denominator {} but no shift matrix", r_));
    shift_full_ = identity_n_;
  } else {
    if (seed.shift_matrix.rows() != n_ || seed.shift_matrix.cols() != n_)
      throw Error(fmt::format("family seed shift matrix is {}x{}, expected {}x{}", seed.shift_matrix.rows(),
                              seed.shift_matrix.cols(), n_, n_));
    shift_full_ = seed.shift_matrix;
  }
  const Eigen::MatrixXd reduced_shift = basis_.transpose() * shift_full_ * basis_;
  shift_phase_ = phase_space_block(reduced_shift);
  int denominators = r_;
  for (const auto& check : seed.checks) {
    if (check.denominator < 1 || check.matrix.rows() != n_ || check.matrix.cols() != n_)
      throw Error(fmt::format("trajectory symmetry '{}' needs an {}x{} matrix and a positive denominator",
                              check.label, n_, n_));
    denominators = std::lcm(denominators, check.denominator);
  }
  sample_count_ = denominators * ((options.samples_per_period + denominators - 1) / denominators);
  const Eigen::VectorXd frequencies = system.harmonic_angular_frequencies();
  const double softest = frequencies.size() > 0 ? frequencies.minCoeff() : omega_;
  if (!(softest > 0.0))
    throw Error(fmt::format("harmonic angular frequencies must be positive, got {}", softest));
  escape_radius_ = options.escape_radius_factor * std::sqrt(2.0 * options.energy_max) / softest;
  integrator_.emplace(system, basis_, options.integration_tolerance, options.variational_tolerance,
                      escape_radius_, options.max_integration_steps);
}

Eigen::VectorXd FamilySolver::scaled_state(const Unknowns& u, double length) const {
  Eigen::VectorXd y(2 * m_);
  y.head(m_) = u.a / length;
  y.tail(m_) = u.b / (omega_ * length);
  return y;
}

Unknowns FamilySolver::unscaled(const Eigen::VectorXd& y, double period, double energy, double length) const {
  Unknowns u;
  u.a = length * y.head(m_);
  u.b = omega_ * length * y.tail(m_);
  u.period = period;
  u.energy = energy;
  return u;
}

double FamilySolver::total_energy(const Eigen::VectorXd& y, double length) const {
  const detail::OrbitScaling scaling{length, omega_};
  const Eigen::VectorXd p = integrator_->momenta(y, scaling);
  return 0.5 * p.squaredNorm() + system_.potential(integrator_->positions(y, scaling));
}

FamilySolver::IterationPlan FamilySolver::plan_iteration(bool fresh, double expected_norm,
                                                         bool verify) const {
  IterationPlan plan;
  const double full = options_.integration_tolerance;
  if (fresh) {  // variational integrations run at their own tolerance
    plan.accurate = options_.variational_tolerance <= full;
    return plan;
  }
  // The residual is measured to about a tenth of itself when each step errs by a
  // thousandth of it (a period takes tens of steps).
  constexpr double tolerance_per_residual = 1e-3;
  const bool final_expected = expected_norm >= 0.0 && expected_norm < options_.closure_tolerance;
  plan.tolerance = expected_norm < 0.0 ? options_.newton_tolerance_max
                                       : std::clamp(tolerance_per_residual * expected_norm, full,
                                                    options_.newton_tolerance_max);
  if (final_expected) plan.tolerance = full;
  plan.accurate = plan.tolerance <= full;
  plan.verifying = verify && final_expected;
  return plan;
}

// Chord and Broyden steps converge about linearly at the rate last seen (a tenth when
// unknown); a residual already below the target needs only the accurate confirmation.
double FamilySolver::expected_next_norm(double norm, double previous_norm) {
  constexpr double assumed_rate = 0.1;
  const double rate = std::isfinite(previous_norm) && previous_norm > 0.0
                          ? std::min(1.0, norm / previous_norm)
                          : assumed_rate;
  return norm * rate;
}

void FamilySolver::broyden_update(const Eigen::VectorXd& shooting_change,
                                  const Eigen::VectorXd& previous_step,
                                  const Eigen::VectorXd& previous_time_column) {
  const Eigen::VectorXd state_step = previous_step.head(2 * m_);
  const double step_norm2 = state_step.squaredNorm();
  if (!(step_norm2 > 0.0)) return;
  const Eigen::VectorXd predicted =
      (hint_ - shift_phase_) * state_step + previous_time_column * previous_step(2 * m_);
  hint_ += (shooting_change - predicted) * state_step.transpose() / step_norm2;
}

void FamilySolver::fill_jacobian(const Eigen::VectorXd& end_state, const Eigen::VectorXd& y0,
                                 const CorrectorSetup& setup, const detail::OrbitScaling& scaling,
                                 Eigen::MatrixXd& jacobian) const {
  const bool arclength = !setup.fixed_energy;
  jacobian.setZero();
  jacobian.topLeftCorner(2 * m_, 2 * m_) = hint_ - shift_phase_;
  jacobian.block(0, 2 * m_, 2 * m_, 1) =
      integrator_->scaled_velocity(end_state, scaling) * setup.time_scale / r_;
  Eigen::VectorXd gradient;
  system_.gradient(integrator_->positions(y0, scaling), gradient);
  jacobian.block(2 * m_, 0, 1, m_) =
      (basis_.transpose() * gradient).transpose() / (omega_ * omega_ * setup.length);
  jacobian.block(2 * m_, m_, 1, m_) = y0.tail(m_).transpose();
  if (arclength) jacobian(2 * m_, 2 * m_ + 1) = -1.0;
  jacobian.block(2 * m_ + 1, 0, 1, 2 * m_) = setup.phase_direction.transpose();
  if (arclength) jacobian.row(2 * m_ + 2) = setup.tangent.transpose();
}

detail::IntegrationRequest FamilySolver::iteration_request(const Eigen::VectorXd& y0, double period,
                                                           const IterationPlan& plan, bool fresh) const {
  detail::IntegrationRequest request;
  request.scaled_state = y0;
  request.duration = plan.verifying ? period : period / r_;
  request.variational_basis = fresh ? &basis_ : nullptr;
  request.tolerance = plan.tolerance;
  if (plan.verifying) {
    request.sample_count = sample_count_;
    if (r_ > 1) request.checkpoint = period / r_;
  }
  return request;
}

CorrectorOutcome FamilySolver::correct(const Unknowns& guess, const CorrectorSetup& setup) {
  CorrectorOutcome outcome;
  const double length = setup.length;
  const detail::OrbitScaling scaling{length, omega_};
  const double scale = energy_scale(length);
  const bool arclength = !setup.fixed_energy;
  const int unknowns = 2 * m_ + (arclength ? 2 : 1);
  const int equations = 2 * m_ + (arclength ? 3 : 2);
  Eigen::VectorXd u(unknowns);
  u.head(2 * m_) = scaled_state(guess, length);
  u(2 * m_) = guess.period / setup.time_scale;
  if (arclength) u(2 * m_ + 1) = guess.energy / scale;

  bool fresh = !have_hint_;
  double previous_norm = std::numeric_limits<double>::infinity();
  double expected_norm = -1.0;      // residual expected at this iteration; negative: unknown
  double previous_tolerance = 0.0;  // integration tolerance of the previous iteration
  Eigen::VectorXd residual(equations);
  Eigen::MatrixXd jacobian(equations, unknowns);
  // Broyden's update of the transition-matrix block between chord steps: the shooting
  // residual's change along the last step corrects the reused Jacobian at no extra
  // integration, which turns linear chord convergence superlinear.
  bool have_previous_step = false;
  Eigen::VectorXd previous_shooting, previous_step, previous_time_column;
  for (int iteration = 0; iteration < options_.max_newton_iterations; ++iteration) {
    const double period = u(2 * m_) * setup.time_scale;
    if (!(period > 0.0) || !std::isfinite(period) ||
        period > 2.0 * options_.max_period_factor * 2.0 * units::pi / omega_) {
      outcome.failure = fmt::format("the period left the allowed range (T = {:.6g})", period);
      outcome.escaped = std::isfinite(period) && period > 0.0;
      return outcome;
    }
    const Eigen::VectorXd y0 = u.head(2 * m_);
    const IterationPlan plan = plan_iteration(fresh, expected_norm, setup.verify);
    integrator_->set_full_period(period);
    const auto shared_run = std::make_shared<detail::IntegrationOutcome>(
        integrator_->integrate(iteration_request(y0, period, plan, fresh), scaling));
    const detail::IntegrationOutcome& run = *shared_run;
    const bool checkpointed = plan.verifying && r_ > 1;
    const Eigen::VectorXd& end_state = checkpointed ? run.checkpoint_state : run.scaled_state;
    const double square_integral =
        checkpointed ? run.checkpoint_momentum_square_integral : run.momentum_square_integral;
    ++outcome.iterations;
    if (fresh)
      ++outcome.variational_integrations;
    else
      ++outcome.orbit_integrations;
    if (!run.ok) {
      outcome.failure = run.failure;
      outcome.escaped = run.failure.find("escape") != std::string::npos ||
                        run.failure.find("bound region") != std::string::npos;
      return outcome;
    }
    if (fresh) {
      hint_ = run.transition;
      have_hint_ = true;
    }
    const Eigen::VectorXd shooting = end_state - shift_phase_ * y0;
    if (!fresh && have_previous_step)
      broyden_update(shooting - previous_shooting, previous_step, previous_time_column);
    const double energy = arclength ? u(2 * m_ + 1) * scale : setup.target_energy;
    residual.head(2 * m_) = shooting;
    residual(2 * m_) = (total_energy(y0, length) - energy) / scale;
    residual(2 * m_ + 1) = (y0 - setup.phase_reference).dot(setup.phase_direction);
    if (arclength) residual(2 * m_ + 2) = (u - setup.predicted).dot(setup.tangent);
    const double norm = residual.cwiseAbs().maxCoeff();
    if (!std::isfinite(norm)) {
      outcome.failure = "the shooting residual became non-finite";
      return outcome;
    }
    if (norm < options_.closure_tolerance && plan.accurate) {
      outcome.converged = true;
      outcome.solution = unscaled(y0, period, energy, length);
      outcome.action = r_ * square_integral / (2.0 * units::pi);
      if (plan.verifying) {
        outcome.verification = shared_run;
        outcome.verification_scaling = scaling;
      }
      return outcome;
    }
    expected_norm = expected_next_norm(norm, fresh ? std::numeric_limits<double>::infinity() : previous_norm);
    // A residual measured loosely errs by up to about a tenth of what was expected; a
    // ratio within that noise is no stall.
    const bool within_noise = previous_tolerance > options_.integration_tolerance &&
                              norm < options_.closure_tolerance + 1e2 * previous_tolerance;
    previous_tolerance = plan.tolerance;
    // Broyden steps still gain at this rate; a fresh Jacobian (variational equations with
    // Hessians) costs as much as several orbit integrations.
    constexpr double stall_ratio = 0.25;
    if (!fresh && iteration > 0 && norm > stall_ratio * previous_norm && !within_noise) {
      // Chord steps stall: refresh the Jacobian at the current iterate.
      fresh = true;
      have_previous_step = false;
      previous_norm = std::numeric_limits<double>::infinity();
      expected_norm = norm;
      continue;
    }
    if (iteration > 1 && norm > 2.0 * previous_norm && !within_noise) {
      outcome.failure = fmt::format("newton diverged (residual {:.3g} after {:.3g})", norm, previous_norm);
      return outcome;
    }
    previous_norm = norm;
    fresh = false;

    fill_jacobian(run.scaled_state, y0, setup, scaling, jacobian);
    const Eigen::VectorXd step = jacobian.colPivHouseholderQr().solve(-residual);
    if (!step.allFinite()) {
      outcome.failure = "the newton step was not finite";
      return outcome;
    }
    u += step;
    have_previous_step = true;
    previous_shooting = shooting;
    previous_step = step;
    previous_time_column = jacobian.block(0, 2 * m_, 2 * m_, 1);
  }
  outcome.failure = fmt::format("newton did not converge in {} iterations", options_.max_newton_iterations);
  return outcome;
}

Eigen::VectorXd FamilySolver::tangent_at(const Unknowns& point, const Eigen::MatrixXd& reduced_transition,
                                         double length, double time_scale) const {
  const detail::OrbitScaling scaling{length, omega_};
  const Eigen::VectorXd y0 = scaled_state(point, length);
  const Eigen::VectorXd velocity = integrator_->scaled_velocity(y0, scaling);
  Eigen::MatrixXd jacobian = Eigen::MatrixXd::Zero(2 * m_ + 2, 2 * m_ + 2);
  jacobian.topLeftCorner(2 * m_, 2 * m_) = reduced_transition - shift_phase_;
  // At a solution ẏ(T/r) = D ẏ(0).
  jacobian.block(0, 2 * m_, 2 * m_, 1) = shift_phase_ * velocity * time_scale / r_;
  Eigen::VectorXd gradient;
  system_.gradient(integrator_->positions(y0, scaling), gradient);
  jacobian.block(2 * m_, 0, 1, m_) = (basis_.transpose() * gradient).transpose() / (omega_ * omega_ * length);
  jacobian.block(2 * m_, m_, 1, m_) = y0.tail(m_).transpose();
  jacobian(2 * m_, 2 * m_ + 1) = -1.0;
  jacobian.block(2 * m_ + 1, 0, 1, 2 * m_) = velocity.normalized().transpose();
  Eigen::JacobiSVD<Eigen::MatrixXd> svd(jacobian, Eigen::ComputeFullV);
  return svd.matrixV().col(2 * m_ + 1);
}

double FamilySolver::classify_multipliers(const Eigen::MatrixXd& monodromy, const Eigen::VectorXd& q,
                                          const Eigen::VectorXd& p, double length, OrbitPoint& point) const {
  // The neutral multipliers at +1 form Jordan blocks that round-off splits by
  // ~sqrt(ε); they are removed exactly instead. In scaled phase-space coordinates
  // (q/ℓ, p/(ω₀ℓ)), with H and each conserved momentum L = pᵀGq of a continuous
  // symmetry G: W = {v ⊥ ∇H, ∇L} is invariant under M, and so are the flow direction f
  // and the symmetry directions g = (Gq, Gp), which lie in W. On an orthonormal basis U
  // of W ∩ {f, g}^⊥ the quotient map is UᵀMU, whose eigenvalues are the non-neutral
  // multipliers. (For a rotating orbit g ∥ f and ∇L ∥ ∇H; the two neutral multipliers
  // this leaves are then the two closest to +1.)
  const int n = n_;
  const Eigen::VectorXd qs = q / length, ps = p / (omega_ * length);
  Eigen::VectorXd gradient;
  system_.gradient(q, gradient);
  std::vector<Eigen::VectorXd> constraints;
  auto add = [&](const Eigen::VectorXd& top, const Eigen::VectorXd& bottom) {
    Eigen::VectorXd v(2 * n);
    v << top, bottom;
    constraints.push_back(v);
  };
  add(length * gradient, omega_ * omega_ * length * length * ps);  // ∇H
  add(omega_ * ps, -gradient / (omega_ * length));                 // f
  // A continuous symmetry that leaves the orbit itself unchanged (a linear molecule's
  // stretching orbit under rotation about the axis) has no neutral pair.
  int moving_symmetries = 0;
  const double state_norm = std::sqrt(qs.squaredNorm() + ps.squaredNorm());
  for (const Eigen::MatrixXd& g : system_.symmetry_generators()) {
    Eigen::VectorXd direction(2 * n);
    direction << g * qs, g * ps;
    constexpr double invariance_tolerance = 1e-8;  // relative; a rotated orbit differs at O(1) otherwise
    if (direction.norm() <= invariance_tolerance * state_norm) continue;
    ++moving_symmetries;
    add(g.transpose() * ps, g * qs);  // ∇L
    add(g * qs, g * ps);              // symmetry direction
  }
  Eigen::MatrixXd stacked(2 * n, static_cast<Eigen::Index>(constraints.size()));
  for (std::size_t k = 0; k < constraints.size(); ++k) {
    const double norm = constraints[k].norm();
    stacked.col(static_cast<Eigen::Index>(k)) =
        norm > 0.0 ? Eigen::VectorXd(constraints[k] / norm) : constraints[k];
  }
  Eigen::JacobiSVD<Eigen::MatrixXd> svd(stacked, Eigen::ComputeFullU);
  constexpr double rank_tolerance = 1e-6;  // directions closer than this to dependent count once
  int rank = 0;
  for (Eigen::Index k = 0; k < svd.singularValues().size(); ++k)
    if (svd.singularValues()(k) > rank_tolerance * svd.singularValues()(0)) ++rank;
  const Eigen::MatrixXd complement = svd.matrixU().rightCols(2 * n - rank);
  const Eigen::MatrixXd reduced = complement.transpose() * monodromy * complement;

  std::vector<std::complex<double>> nontrivial;
  if (reduced.rows() > 0) {  // one degree of freedom has only the neutral pair
    Eigen::EigenSolver<Eigen::MatrixXd> solver(reduced, false);
    nontrivial.assign(solver.eigenvalues().data(), solver.eigenvalues().data() + solver.eigenvalues().size());
  }
  const int total_neutral = 2 + 2 * moving_symmetries;
  const int leftover = std::max(0, std::min(static_cast<int>(nontrivial.size()), total_neutral - rank));
  std::sort(nontrivial.begin(), nontrivial.end(),
            [](const auto& x, const auto& y) { return std::abs(x - 1.0) < std::abs(y - 1.0); });
  std::vector<std::complex<double>> all(static_cast<std::size_t>(rank), std::complex<double>(1.0, 0.0));
  all.insert(all.end(), nontrivial.begin(), nontrivial.begin() + leftover);  // neutral, as computed
  const std::vector<std::complex<double>> free_multipliers(nontrivial.begin() + leftover, nontrivial.end());
  all.insert(all.end(), free_multipliers.begin(), free_multipliers.end());
  std::sort(all.begin(), all.end(), [](const auto& x, const auto& y) { return std::abs(x) > std::abs(y); });
  point.floquet_multipliers = all;
  point.floquet_moduli.clear();
  for (const auto& mu : all) point.floquet_moduli.push_back(std::abs(mu));

  point.largest_modulus = 1.0;
  point.unstable_count = point.unstable_negative_real = point.unstable_positive_real = 0;
  point.multipliers_near_one = 0;
  const double threshold = 1.0 + options_.stability_tolerance;
  for (const auto& mu : free_multipliers) {
    const double modulus = std::abs(mu);
    if (std::abs(mu - 1.0) < options_.partner_resolution) ++point.multipliers_near_one;
    point.largest_modulus = std::max(point.largest_modulus, modulus);
    if (modulus <= threshold) continue;
    ++point.unstable_count;
    if (std::abs(mu.imag()) <= options_.stability_tolerance * modulus) {
      if (mu.real() < 0.0)
        ++point.unstable_negative_real;
      else
        ++point.unstable_positive_real;
    }
  }
  point.stable = point.unstable_count == 0;
  point.nonneutral_multipliers = free_multipliers;
  last_monodromy_ = monodromy;
  return collision_distance(free_multipliers);
}

bool FamilySolver::analyze_point(const Unknowns& u, const CorrectorOutcome& verified, OrbitPoint& point,
                                 PointAnalysis& analysis) {
  const double length = verified.verification ? verified.verification_scaling.length : length_for(u.energy);
  const detail::OrbitScaling scaling{length, omega_};
  const Eigen::VectorXd y0 = scaled_state(u, length);
  integrator_->set_full_period(u.period);

  // Whole period with samples, unless the corrector's last iteration was that integration.
  std::shared_ptr<const detail::IntegrationOutcome> verification = verified.verification;
  if (!verification) {
    detail::IntegrationRequest sampled;
    sampled.scaled_state = y0;
    sampled.duration = u.period;
    sampled.sample_count = sample_count_;
    verification = std::make_shared<detail::IntegrationOutcome>(integrator_->integrate(sampled, scaling));
    ++point.orbit_integrations;
  }
  const detail::IntegrationOutcome& run = *verification;
  if (!run.ok) {
    analysis.ok = false;
    analysis.failure = run.failure;
    return false;
  }
  const int count = sample_count_;
  std::vector<Eigen::VectorXd> q(count), p(count);
  for (int j = 0; j < count; ++j) {
    q[j] = integrator_->positions(run.samples[j], scaling);
    p[j] = integrator_->momenta(run.samples[j], scaling);
  }
  const double h = u.period / count;
  point.amplitude = refined_maximum(q, p, h, n_);
  const Eigen::VectorXd probe = system_.cartesian_displacement_angstrom(q[0]);
  if (probe.size() > 0) {
    std::vector<Eigen::VectorXd> x(count), v(count);
    for (int j = 0; j < count; ++j) {
      x[j] = system_.cartesian_displacement_angstrom(q[j]);
      v[j] = system_.cartesian_displacement_angstrom(p[j]);  // the map is linear: velocities map alike
    }
    point.amplitude_angstrom = refined_maximum(x, v, h, 3);
  }
  // Over the integrator's own states: the interpolated samples would add their
  // interpolation error to the drift being measured.
  double lowest = std::numeric_limits<double>::infinity(), highest = -lowest;
  for (const Eigen::VectorXd& state : run.step_states) {
    const double energy = total_energy(state, length);
    lowest = std::min(lowest, energy);
    highest = std::max(highest, energy);
  }
  point.energy_drift = (highest - lowest) / u.energy;
  const Eigen::VectorXd q_end = integrator_->positions(run.scaled_state, scaling);
  const Eigen::VectorXd p_end = integrator_->momenta(run.scaled_state, scaling);
  point.closure_error = std::max((q_end - q[0]).norm(), (p_end - p[0]).norm() / omega_) / point.amplitude;
  point.symmetry_residual = 0.0;
  for (const auto& check : seed_.checks) {
    const int shift = (count / check.denominator) * check.numerator;
    for (int j = 0; j < count; ++j) {
      const int k = (j + shift) % count;
      const double defect =
          std::max((check.matrix * q[j] - q[k]).norm(), (check.matrix * p[j] - p[k]).norm() / omega_);
      point.symmetry_residual = std::max(point.symmetry_residual, defect / point.amplitude);
    }
  }
  point.action = run.momentum_square_integral / (2.0 * units::pi);

  // Variational equations over T/r: the whole space for Floquet multipliers (its
  // restriction to F is the Jacobian of the next corrector), else only F.
  const bool whole = options_.compute_floquet || m_ == n_;
  const Eigen::MatrixXd* variational_basis = whole ? &identity_n_ : &basis_;
  if (options_.measure_reference_cost && accepted_.empty()) {
    // The benchmark's unit: one full period with direct whole-space variational equations.
    detail::IntegrationRequest reference;
    reference.scaled_state = y0;
    reference.duration = u.period;
    reference.variational_basis = &identity_n_;
    integrator_->integrate(reference, scaling);
  }
  Eigen::MatrixXd transition;
  bool interpolated = false;
  if (options_.variational_nodes_per_period > 0) {
    detail::InterpolatedTransitionRequest request;
    request.positions = &q;
    request.spacing = h;
    request.duration = u.period / r_;
    request.node_stride = std::max(1, count / options_.variational_nodes_per_period);
    request.variational_basis = variational_basis;
    request.angular_frequency = omega_;
    request.tolerance = options_.variational_tolerance;
    std::size_t steps = 0;
    interpolated = detail::interpolated_transition(system_, request, transition, steps);
  }
  if (!interpolated) {
    detail::IntegrationRequest variational;
    variational.scaled_state = y0;
    variational.duration = u.period / r_;
    variational.variational_basis = variational_basis;
    const detail::IntegrationOutcome linear = integrator_->integrate(variational, scaling);
    if (!linear.ok) {
      analysis.ok = false;
      analysis.failure = linear.failure;
      return false;
    }
    transition = linear.transition;
  }
  ++point.variational_integrations;
  if (whole) {
    const Eigen::MatrixXd reduce = phase_space_block(basis_).transpose();  // 2m × 2n
    analysis.reduced_transition = reduce * transition * reduce.transpose();
    if (options_.compute_floquet) {
      const Eigen::MatrixXd shift = phase_space_block(shift_full_);
      const Eigen::MatrixXd step = shift.transpose() * transition;  // D⁻¹Φ(T/r), D orthogonal
      Eigen::MatrixXd monodromy = Eigen::MatrixXd::Identity(2 * n_, 2 * n_);
      for (int k = 0; k < r_; ++k) monodromy = shift * monodromy * step;
      // monodromy = D^r (D⁻¹Φ)^r, built as D(D(…)(D⁻¹Φ))(D⁻¹Φ); equal because products associate.
      analysis.collision_distance = classify_multipliers(monodromy, q[0], p[0], length, point);
    }
  } else {
    analysis.reduced_transition = transition;
  }
  hint_ = analysis.reduced_transition;
  have_hint_ = true;
  return true;
}

void FamilySolver::fill_converted(OrbitPoint& point) const {
  point.angular_frequency = 2.0 * units::pi / point.period;
  point.energy_cm1 = point.energy * units_.cm1_per_energy;
  point.frequency_cm1 = point.angular_frequency * units_.cm1_per_angular_frequency;
  point.period_fs = point.period * units_.fs_per_time;
  point.action_hbar = point.action / units_.hbar;
}

}  // namespace

namespace {

ContinuationResult FamilySolver::finish(ContinuationResult& result, ContinuationStatus status,
                                        std::string message) {
  result.status = status;
  result.message = std::move(message);
  detect_events(result);
  if (!result.points.empty()) build_ladder(result);
  const auto& counters = integrator_->counters();
  const SystemEvaluationCounts used = VibrationalSystem::thread_counts() - counts_before_;
  result.gradient_evaluations = used.gradients;
  result.hessian_evaluations = used.hessians;
  result.hessian_vector_products = used.hessian_vector_products;
  result.integration_steps = counters.steps;
  result.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - started_).count();
  if (counters.full_variational_periods > 0.0)
    result.seconds_per_variational_period =
        counters.full_variational_seconds / counters.full_variational_periods;
  for (const auto& point : result.points) {
    result.newton_iterations += point.newton_iterations;
    result.variational_integrations += point.variational_integrations;
    result.orbit_integrations += point.orbit_integrations;
  }
  return result;
}

CorrectorSetup FamilySolver::fixed_energy_setup(const Unknowns& reference, double energy) const {
  CorrectorSetup setup;
  setup.length = length_for(energy);
  setup.time_scale = time_scale_for(reference.period);
  setup.fixed_energy = true;
  setup.target_energy = energy;
  setup.phase_reference = scaled_state(reference, setup.length);
  setup.phase_direction =
      integrator_->scaled_velocity(setup.phase_reference, {setup.length, omega_}).normalized();
  setup.verify = true;  // the start and the point at energy_max are accepted points
  return setup;
}

bool FamilySolver::accept(const CorrectorOutcome& corrected, const PointCost& cost,
                          ContinuationResult& result) {
  OrbitPoint point;
  point.energy = corrected.solution.energy;
  point.period = corrected.solution.period;
  point.newton_iterations = cost.iterations;
  point.variational_integrations = cost.variational;
  point.orbit_integrations = cost.orbits;
  PointAnalysis analysis;
  if (!analyze_point(corrected.solution, corrected, point, analysis)) {
    last_integration_failure_ = analysis.failure;
    return false;
  }
  const double length = length_for(point.energy);
  const double time_scale = time_scale_for(point.period);
  Eigen::VectorXd new_tangent =
      tangent_at(corrected.solution, analysis.reduced_transition, length, time_scale);
  if (accepted_.empty()) {
    if (new_tangent(2 * m_ + 1) < 0.0) new_tangent = -new_tangent;
  } else {
    // Orient along the secant from the previous point (both in this point's scaling).
    const Unknowns& previous = accepted_.back();
    Eigen::VectorXd secant(2 * m_ + 2);
    secant.head(2 * m_) = scaled_state(corrected.solution, length) - scaled_state(previous, length);
    secant(2 * m_) = (corrected.solution.period - previous.period) / time_scale;
    secant(2 * m_ + 1) = (corrected.solution.energy - previous.energy) / energy_scale(length);
    if (new_tangent.dot(secant) < 0.0) new_tangent = -new_tangent;
  }
  tangent_ = new_tangent;
  tangent_length_ = length;
  tangent_time_scale_ = time_scale;
  point.energy_direction = tangent_(2 * m_ + 1) >= 0.0 ? 1 : -1;
  point.initial_positions = basis_ * corrected.solution.a;
  point.initial_momenta = basis_ * corrected.solution.b;
  const SystemEvaluationCounts used = VibrationalSystem::thread_counts() - cost.counts_at_start;
  point.gradient_evaluations = used.gradients;
  point.hessian_evaluations = used.hessians;
  point.hessian_vector_products = used.hessian_vector_products;
  point.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - cost.started).count();
  fill_converted(point);
  const double point_energy = point.energy, point_frequency = point.angular_frequency;
  result.points.push_back(std::move(point));
  accepted_.push_back(corrected.solution);
  accepted_transitions_.push_back(analysis.reduced_transition);
  accepted_actions_.push_back(corrected.action);
  recent_.push_back({point_energy, point_frequency, analysis.collision_distance});
  if (recent_.size() > 3) recent_.erase(recent_.begin());
  if (options_.on_point) options_.on_point(result.points.back().energy);
  return true;
}

bool FamilySolver::start_on_branch(ContinuationResult& result, std::string& failure) {
  const BranchStart& branch = *seed_.branch;
  if (branch.positions.size() != n_ || branch.momenta.size() != n_ || branch.direction.size() != 2 * n_)
    throw Error(
        fmt::format("branch start needs positions and momenta of length {} and a direction of length "
                    "{}, got {}, {} and {}",
                    n_, 2 * n_, branch.positions.size(), branch.momenta.size(), branch.direction.size()));
  Unknowns birth{basis_.transpose() * branch.positions, basis_.transpose() * branch.momenta, branch.period,
                 branch.energy};
  const double length = length_for(branch.energy);
  const double time_scale = time_scale_for(branch.period);
  const Unknowns direction{basis_.transpose() * branch.direction.head(n_),
                           basis_.transpose() * branch.direction.tail(n_), 0.0, 0.0};
  Eigen::VectorXd along = Eigen::VectorXd::Zero(2 * m_ + 2);
  along.head(2 * m_) = scaled_state(direction, length);
  if (!(along.norm() > 0.0)) {
    failure = "the branch direction lies outside the family's invariant subspace";
    return false;
  }
  along.normalize();
  Eigen::VectorXd birth_scaled(2 * m_ + 2);
  birth_scaled << scaled_state(birth, length), branch.period / time_scale,
      branch.energy / energy_scale(length);
  const double size = birth_scaled.head(2 * m_).norm();
  double step = branch.step;
  for (int attempt = 0; attempt < 3; ++attempt, step *= 0.5) {
    PointCost cost;
    cost.started = std::chrono::steady_clock::now();
    cost.counts_at_start = VibrationalSystem::thread_counts();
    CorrectorSetup setup;
    setup.length = length;
    setup.time_scale = time_scale;
    setup.fixed_energy = false;
    setup.predicted = birth_scaled + step * size * along;
    setup.tangent = along;
    setup.phase_reference = setup.predicted.head(2 * m_);
    setup.phase_direction =
        integrator_->scaled_velocity(birth_scaled.head(2 * m_), {length, omega_}).normalized();
    setup.verify = true;
    const Unknowns guess = unscaled(setup.predicted.head(2 * m_), branch.period, branch.energy, length);
    have_hint_ = false;
    const CorrectorOutcome corrected = correct(guess, setup);
    if (accept_first(corrected, cost, result, failure)) return true;
  }
  return false;
}

OrbitProbe FamilySolver::probe(const OrbitPoint& near, double energy) {
  OrbitProbe out;
  // Scaled to the target energy as a harmonic orbit would be.
  const double stretch = near.energy > 0.0 ? std::sqrt(energy / near.energy) : 1.0;
  const Unknowns guess{stretch * (basis_.transpose() * near.initial_positions),
                       stretch * (basis_.transpose() * near.initial_momenta), near.period, energy};
  have_hint_ = false;
  const CorrectorOutcome corrected = correct(guess, fixed_energy_setup(guess, energy));
  if (!corrected.converged) {
    out.failure = corrected.failure;
    return out;
  }
  OrbitPoint& point = out.point;
  point.energy = corrected.solution.energy;
  point.period = corrected.solution.period;
  PointAnalysis analysis;
  last_monodromy_.resize(0, 0);
  if (!analyze_point(corrected.solution, corrected, point, analysis)) {
    out.failure = analysis.failure;
    return out;
  }
  point.initial_positions = basis_ * corrected.solution.a;
  point.initial_momenta = basis_ * corrected.solution.b;
  fill_converted(point);
  out.converged = true;
  if (last_monodromy_.size() > 0) {
    // From the scaled (Q/ℓ, P/(ωℓ)) to (Q, P): the length cancels, the momenta keep ω.
    Eigen::VectorXd scale = Eigen::VectorXd::Ones(2 * n_);
    scale.tail(n_).setConstant(omega_);
    out.monodromy = scale.asDiagonal() * last_monodromy_ * scale.cwiseInverse().asDiagonal();
  }
  return out;
}

bool FamilySolver::accept_first(const CorrectorOutcome& corrected, PointCost& cost,
                                ContinuationResult& result, std::string& failure) {
  if (!corrected.converged) {
    failure = corrected.failure;
    return false;
  }
  cost.iterations = corrected.iterations;
  cost.variational = corrected.variational_integrations;
  cost.orbits = corrected.orbit_integrations;
  if (accept(corrected, cost, result)) return true;
  failure = last_integration_failure_;
  return false;
}

bool FamilySolver::start(ContinuationResult& result, std::string& failure) {
  if (seed_.branch) return start_on_branch(result, failure);
  double start_energy = options_.start_energy_fraction * options_.energy_max;
  for (int attempt = 0; attempt < 4; ++attempt, start_energy *= 0.1) {
    PointCost cost;
    cost.started = std::chrono::steady_clock::now();
    cost.counts_at_start = VibrationalSystem::thread_counts();
    const Eigen::VectorXcd& v = seed_.linear_mode;
    const double amplitude = std::sqrt(2.0 * start_energy) / (omega_ * v.norm());
    Unknowns guess;
    guess.a = basis_.transpose() * (amplitude * v.real());
    guess.b = basis_.transpose() * (-omega_ * amplitude * v.imag());
    guess.period = 2.0 * units::pi / omega_;
    guess.energy = start_energy;
    have_hint_ = false;
    const CorrectorOutcome corrected = correct(guess, fixed_energy_setup(guess, start_energy));
    if (accept_first(corrected, cost, result, failure)) return true;
  }
  return false;
}

// The arclength corrector overshot energy_max: solve the last point at energy_max exactly
// instead, starting from the overshooting orbit; keep the overshoot if that fails.
ContinuationResult FamilySolver::finish_at_energy_max(ContinuationResult& result, const PointCost& cost) {
  const double energy_max = options_.energy_max;
  const OrbitPoint overshoot_point = result.points.back();
  const Unknowns overshoot = accepted_.back();
  const Eigen::MatrixXd overshoot_transition = accepted_transitions_.back();
  const double overshoot_action = accepted_actions_.back();
  result.points.pop_back();
  accepted_.pop_back();
  accepted_transitions_.pop_back();
  accepted_actions_.pop_back();
  Unknowns guess = overshoot;
  guess.energy = energy_max;
  hint_ = overshoot_transition;
  have_hint_ = true;
  const CorrectorOutcome last = correct(guess, fixed_energy_setup(overshoot, energy_max));
  PointCost last_cost = cost;
  last_cost.iterations = last.iterations;
  last_cost.variational = last.variational_integrations;
  last_cost.orbits = last.orbit_integrations;
  if (last.converged && accept(last, last_cost, result))
    return finish(result, ContinuationStatus::reached_energy_max, "reached energy_max");
  result.points.push_back(overshoot_point);
  accepted_.push_back(overshoot);
  accepted_transitions_.push_back(overshoot_transition);
  accepted_actions_.push_back(overshoot_action);
  result.warnings.push_back(
      fmt::format("the last point lies slightly above energy_max, at {}", energy_text(overshoot.energy)));
  return finish(result, ContinuationStatus::reached_energy_max, "reached energy_max");
}

// One predictor-corrector step of size `step` (capped in energy and at energy_max) from
// the last accepted point; the outcome of the corrector, and whether this was the final
// step onto energy_max.
CorrectorOutcome FamilySolver::continuation_step(double step, double& trial_step, bool& final_step) {
  const double energy_max = options_.energy_max;
  const Unknowns& current = accepted_.back();
  const double length = tangent_length_;
  const double time_scale = tangent_time_scale_;
  const double scale = energy_scale(length);
  const double energy_rate = tangent_(2 * m_ + 1) * scale;  // dE per unit step
  const double energy_cap = energy_step_cap();
  trial_step = step;
  if (std::abs(energy_rate) * trial_step > energy_cap) trial_step = energy_cap / std::abs(energy_rate);
  final_step = energy_rate > 0.0 && current.energy + energy_rate * trial_step >= energy_max;
  if (final_step) trial_step = (energy_max - current.energy) / energy_rate;

  Eigen::VectorXd current_scaled(2 * m_ + 2);
  current_scaled.head(2 * m_) = scaled_state(current, length);
  current_scaled(2 * m_) = current.period / time_scale;
  current_scaled(2 * m_ + 1) = current.energy / scale;
  const Eigen::VectorXd predicted = current_scaled + trial_step * tangent_;
  Unknowns guess =
      unscaled(predicted.head(2 * m_), predicted(2 * m_) * time_scale, predicted(2 * m_ + 1) * scale, length);
  CorrectorSetup setup;
  setup.length = length;
  setup.time_scale = time_scale;
  setup.phase_reference = current_scaled.head(2 * m_);
  setup.phase_direction = integrator_->scaled_velocity(setup.phase_reference, {length, omega_}).normalized();
  setup.fixed_energy = final_step;
  setup.target_energy = energy_max;
  setup.tangent = tangent_;
  setup.predicted = predicted;
  setup.verify = true;
  if (final_step) guess.energy = energy_max;
  return correct(guess, setup);
}

double FamilySolver::energy_step_cap() const {
  const double energy_max = options_.energy_max;
  const double resolution = options_.max_energy_step_fraction * energy_max;
  double cap = options_.straight_energy_step_fraction * energy_max;
  if (recent_.size() < 3 || cap <= resolution) return resolution;
  const StepMemory& a = recent_[0];
  const StepMemory& b = recent_[1];
  const StepMemory& c = recent_[2];
  if (!(a.energy < b.energy && b.energy < c.energy)) return resolution;  // near a fold
  // Curvature: the chord between points errs by ΔE²·|ω''|/8 at its middle.
  const double second_derivative = 2.0 *
                                   ((c.angular_frequency - b.angular_frequency) / (c.energy - b.energy) -
                                    (b.angular_frequency - a.angular_frequency) / (b.energy - a.energy)) /
                                   (c.energy - a.energy);
  if (second_derivative != 0.0)
    cap = std::min(cap, std::sqrt(8.0 * options_.backbone_tolerance * c.angular_frequency /
                                  std::abs(second_derivative)));
  // Events: where two multipliers approach each other, at most half the way to their
  // meeting at the current rate; close to a meeting, the resolution.
  if (std::isfinite(c.collision_distance)) {
    constexpr double near_distance = 0.05;  // multipliers this close may meet within a step
    if (c.collision_distance < near_distance) return resolution;
    const double closing_rate = (b.collision_distance - c.collision_distance) / (c.energy - b.energy);
    if (std::isfinite(closing_rate) && closing_rate > 0.0)
      cap = std::min(cap, 0.5 * c.collision_distance / closing_rate);
  }
  return std::max(resolution, cap);
}

// Why the family stops after a corrector failure at the smallest step.
ContinuationResult FamilySolver::finish_after_failure(ContinuationResult& result, const std::string& failure,
                                                      bool escape) {
  const double escape_energy = system_.escape_energy();
  const double reached = result.points.back().energy;
  const bool near_escape = std::isfinite(escape_energy) && reached > 0.9 * escape_energy;
  if (escape || near_escape)
    return finish(result, ContinuationStatus::escaped,
                  fmt::format("orbits stop closing above {} ({}){}", energy_text(reached), failure,
                              near_escape ? fmt::format(": the escape energy of the system is {}",
                                                        energy_text(escape_energy))
                                          : std::string(": probably a dissociation or barrier")));
  return finish(
      result, ContinuationStatus::step_too_small,
      fmt::format("the corrector failed at the smallest step beyond {}: {}", energy_text(reached), failure));
}

// Step-size control from the corrector's effort: with the predictor's residual evaluation,
// Broyden-updated chord steps and the accurate confirmation a comfortable step takes about
// six integrations (most of them loose).
double FamilySolver::next_step(double step, double trial_step, int iterations) const {
  // One more than before: the loose iterations end with an accurate confirmation.
  if (iterations <= 6) return std::min(options_.max_step, 1.5 * trial_step);
  if (iterations >= 8) return std::max(options_.min_step, 0.6 * trial_step);
  return std::max(trial_step, std::min(step, options_.max_step));
}

ContinuationResult FamilySolver::run() {
  started_ = std::chrono::steady_clock::now();
  counts_before_ = VibrationalSystem::thread_counts();
  ContinuationResult result;
  result.reduced_dimension = m_;
  result.shift_denominator = r_;
  const double energy_max = options_.energy_max;
  const double escape_energy = system_.escape_energy();
  if (energy_max >= escape_energy)
    result.warnings.push_back(
        fmt::format("energy_max {} lies at or above the system's escape energy {}; the family ends there",
                    energy_text(energy_max), energy_text(escape_energy)));
  std::string start_failure;
  if (!start(result, start_failure))
    return finish(result, ContinuationStatus::start_failed,
                  fmt::format("no periodic orbit was found near the linear orbit: {}", start_failure));
  const double first_energy = result.points.front().energy;

  double step = options_.initial_step;
  PointCost cost;
  cost.started = std::chrono::steady_clock::now();
  cost.counts_at_start = VibrationalSystem::thread_counts();
  std::string last_failure;
  bool last_failure_escape = false;
  while (true) {
    if (static_cast<int>(result.points.size()) >= options_.max_points)
      return finish(result, ContinuationStatus::point_limit,
                    fmt::format("stopped after {} points at {}, below energy_max", result.points.size(),
                                energy_text(result.points.back().energy)));
    double trial_step = step;
    bool final_step = false;
    const CorrectorOutcome corrected = continuation_step(step, trial_step, final_step);
    cost.iterations += corrected.iterations;
    cost.variational += corrected.variational_integrations;
    cost.orbits += corrected.orbit_integrations;
    bool accepted = false;
    if (corrected.converged) {
      accepted = accept(corrected, cost, result);
      if (!accepted) {
        last_failure = last_integration_failure_;
        last_failure_escape = true;
      }
    } else {
      last_failure = corrected.failure;
      last_failure_escape = corrected.escaped;
    }
    if (!accepted) {
      ++result.rejected_steps;
      // Restore the Jacobian of the last accepted point for the retry.
      hint_ = accepted_transitions_.back();
      have_hint_ = true;
      step = 0.5 * trial_step;
      if (step < options_.min_step) return finish_after_failure(result, last_failure, last_failure_escape);
      continue;
    }
    step = next_step(step, trial_step, corrected.iterations);
    cost = PointCost{};
    cost.started = std::chrono::steady_clock::now();
    cost.counts_at_start = VibrationalSystem::thread_counts();
    if (final_step) return finish(result, ContinuationStatus::reached_energy_max, "reached energy_max");
    if (result.points.back().energy > energy_max) return finish_at_energy_max(result, cost);
    const double period_limit = options_.max_period_factor * 2.0 * units::pi / omega_;
    if (result.points.back().period > period_limit)
      return finish(
          result, ContinuationStatus::escaped,
          fmt::format("the period grew past {} harmonic periods at {}: the orbits approach a "
                      "separatrix (dissociation or a barrier){}",
                      options_.max_period_factor, energy_text(result.points.back().energy),
                      std::isfinite(escape_energy)
                          ? fmt::format("; the escape energy of the system is {}", energy_text(escape_energy))
                          : std::string()));
    if (result.points.back().energy < first_energy)
      return finish(result, ContinuationStatus::turned_back,
                    "after a fold the family returned below the energy of its first point");
  }
}

void FamilySolver::detect_events(ContinuationResult& result) const {
  const auto& points = result.points;
  auto add = [&](FamilyEventKind kind, int index, std::string message) {
    FamilyEvent event;
    event.kind = kind;
    event.point_index = index;
    event.energy = 0.5 * (points[index - 1].energy + points[index].energy);
    if (kind == FamilyEventKind::fold)
      event.energy = std::max(points[index - 1].energy, points[index].energy);
    event.energy_cm1 = event.energy * units_.cm1_per_energy;
    event.message = std::move(message);
    result.events.push_back(std::move(event));
  };
  // Degenerate blocks: the first point where the partner multipliers have left +1.
  std::size_t resolved_from = 0;
  if (seed_.block_dimension >= 2) {
    while (resolved_from < points.size() && points[resolved_from].multipliers_near_one > 0) ++resolved_from;
  }
  bool suppressed = false;
  for (std::size_t i = 1; i < points.size(); ++i) {
    const int k = static_cast<int>(i);
    const OrbitPoint& a = points[i - 1];
    const OrbitPoint& b = points[i];
    const bool unresolved =
        i <= resolved_from && seed_.block_dimension >= 2 && !b.floquet_multipliers.empty();
    if (unresolved && a.unstable_count != b.unstable_count &&
        a.unstable_negative_real == b.unstable_negative_real) {
      suppressed = true;
      if (a.energy_direction != b.energy_direction)
        add(FamilyEventKind::fold, k,
            fmt::format("the family turns {} in energy between {} and {}",
                        b.energy_direction < 0 ? "back" : "forward again", energy_text(a.energy),
                        energy_text(b.energy)));
      continue;
    }
    const std::string bracket =
        fmt::format("between {} and {}", energy_text(a.energy), energy_text(b.energy));
    if (a.energy_direction != b.energy_direction)
      add(FamilyEventKind::fold, k,
          fmt::format("the family turns {} in energy {}", b.energy_direction < 0 ? "back" : "forward again",
                      bracket));
    if (b.floquet_multipliers.empty() || a.floquet_multipliers.empty()) continue;
    if (a.unstable_negative_real != b.unstable_negative_real)
      add(FamilyEventKind::period_doubling, k,
          fmt::format("a Floquet multiplier passes through -1 {}", bracket));
    if (a.unstable_positive_real != b.unstable_positive_real)
      add(FamilyEventKind::branch_point, k,
          fmt::format("a non-neutral Floquet multiplier passes through +1 {} (a bifurcating family)",
                      bracket));
    if (a.stable && !b.stable)
      add(FamilyEventKind::stability_lost, k,
          fmt::format("{} multiplier(s) leave the unit circle {}", b.unstable_count, bracket));
    else if (!a.stable && b.stable)
      add(FamilyEventKind::stability_gained, k,
          fmt::format("all multipliers return to the unit circle {}", bracket));
    else if (a.unstable_count != b.unstable_count)
      add(FamilyEventKind::instability_changed, k,
          fmt::format("unstable multipliers change from {} to {} {}", a.unstable_count, b.unstable_count,
                      bracket));
  }
  if (suppressed)
    result.warnings.push_back(fmt::format(
        "below {} the multipliers of the degenerate partner motion lie within {} of +1 and their stability "
        "is not "
        "resolved; stability changes there are not reported",
        energy_text(resolved_from < points.size() ? points[resolved_from].energy : points.back().energy),
        options_.partner_resolution));
  if (result.status == ContinuationStatus::escaped && !points.empty()) {
    FamilyEvent event;
    event.kind = FamilyEventKind::escape;
    event.point_index = static_cast<int>(points.size()) - 1;
    event.energy = points.back().energy;
    event.energy_cm1 = points.back().energy_cm1;
    event.message = result.message;
    result.events.push_back(std::move(event));
  }
}

void FamilySolver::build_ladder(ContinuationResult& result) {
  const double hbar = units_.hbar;
  if (!(hbar > 0.0) || !std::isfinite(hbar)) return;
  // Nodes (J, E, dE/dJ = ω) along the first monotone stretch, starting at the origin.
  struct Node {
    double action, energy, slope;
    int point;  // −1 for the origin
  };
  std::vector<Node> nodes{{0.0, 0.0, omega_, -1}};
  for (std::size_t i = 0; i < result.points.size(); ++i) {
    const OrbitPoint& point = result.points[i];
    if (point.energy_direction < 0 || point.action <= nodes.back().action) break;
    nodes.push_back({point.action, point.energy, point.angular_frequency, static_cast<int>(i)});
  }
  std::vector<LadderLevel> levels;
  for (int n = 0; n <= options_.ladder_max_level; ++n) {
    const double target = (n + 0.5) * hbar;
    if (target > nodes.back().action) break;
    std::size_t k = 1;
    while (nodes[k].action < target) ++k;
    const Node& lo = nodes[k - 1];
    const Node& hi = nodes[k];
    const double width = hi.action - lo.action;
    const double s = (target - lo.action) / width;
    double energy = cubic_hermite_component(lo.energy, lo.slope, hi.energy, hi.slope, width, s);
    LadderLevel level;
    level.n = n;
    double action_error = std::numeric_limits<double>::quiet_NaN();
    if (options_.ladder_tolerance > 0.0) {
      // Newton in energy on the family: dJ/dE = T/2π = 1/ω.
      const Unknowns& upper = accepted_[hi.point];
      // After the first solve the energy moves by a small correction only: starting from
      // the orbit just found, the corrector needs one or two integrations instead of
      // restarting from the interpolation between the accepted points.
      Unknowns previous;
      bool have_previous = false;
      for (int iteration = 0; iteration < 6; ++iteration) {
        Unknowns guess;
        if (have_previous) {
          const double factor = std::sqrt(energy / previous.energy);
          guess = previous;
          guess.a *= factor;
          guess.b *= factor;
        } else if (lo.point < 0) {
          const double factor = std::sqrt(energy / upper.energy);
          guess = upper;
          guess.a *= factor;
          guess.b *= factor;
          guess.period =
              upper.period + (2.0 * units::pi / omega_ - upper.period) * (1.0 - energy / upper.energy);
        } else {
          const Unknowns& lower = accepted_[lo.point];
          const double w = (energy - lower.energy) / (upper.energy - lower.energy);
          guess.a = (1.0 - w) * lower.a + w * upper.a;
          guess.b = (1.0 - w) * lower.b + w * upper.b;
          guess.period = (1.0 - w) * lower.period + w * upper.period;
        }
        guess.energy = energy;
        CorrectorSetup setup;
        setup.length = length_for(energy);
        setup.time_scale = time_scale_for(guess.period);
        setup.fixed_energy = true;
        setup.target_energy = energy;
        setup.phase_reference = scaled_state(guess, setup.length);
        setup.phase_direction =
            integrator_->scaled_velocity(setup.phase_reference, {setup.length, omega_}).normalized();
        hint_ = accepted_transitions_[hi.point];
        have_hint_ = true;
        const CorrectorOutcome corrected = correct(guess, setup);
        if (!corrected.converged) break;
        previous = corrected.solution;
        have_previous = true;
        action_error = corrected.action - target;
        level.refined = true;
        if (std::abs(action_error) < options_.ladder_tolerance * hbar) break;
        energy -= action_error * 2.0 * units::pi / corrected.solution.period;
        level.refined = false;
      }
    }
    level.energy = energy;
    level.energy_cm1 = energy * units_.cm1_per_energy;
    level.action_residual_hbar = std::isfinite(action_error) ? std::abs(action_error) / hbar : 0.0;
    level.harmonic_transition_cm1 = n * omega_ * units_.cm1_per_angular_frequency;
    levels.push_back(level);
  }
  if (levels.empty()) return;
  for (auto& level : levels) level.transition_cm1 = level.energy_cm1 - levels.front().energy_cm1;
  result.ladder = std::move(levels);
}

}  // namespace

ContinuationResult continue_family(const VibrationalSystem& system, const FamilySeed& seed,
                                   const ContinuationOptions& options) {
  FamilySolver solver(system, seed, options);
  return solver.run();
}

OrbitProbe solve_orbit_at_energy(const VibrationalSystem& system, const FamilySeed& seed,
                                 const ContinuationOptions& options, const OrbitPoint& near, double energy) {
  FamilySolver solver(system, seed, options);
  return solver.probe(near, energy);
}

}  // namespace overtone
