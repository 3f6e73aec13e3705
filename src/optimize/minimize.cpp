#include "optimize/minimize.hpp"

#include <LBFGS.h>
#include <fmt/format.h>

#include <cmath>
#include <limits>
#include <stdexcept>

#include "core/error.hpp"
#include "core/option_checks.hpp"
#include "harmonic/harmonic.hpp"

namespace overtone {

namespace {

double rms(const Eigen::VectorXd& g) { return g.norm() / std::sqrt(static_cast<double>(g.size())); }

// Largest distance (Å) of an atom from the centroid of all atoms.
double extent(const Eigen::VectorXd& x) {
  const Eigen::Index atoms = x.size() / 3;
  Eigen::Vector3d centroid = Eigen::Vector3d::Zero();
  for (Eigen::Index i = 0; i < atoms; ++i) centroid += x.segment<3>(3 * i);
  centroid /= static_cast<double>(atoms);
  double largest = 0.0;
  for (Eigen::Index i = 0; i < atoms; ++i)
    largest = std::max(largest, (x.segment<3>(3 * i) - centroid).norm());
  return largest;
}

double largest_atom_move(const Eigen::VectorXd& step) {
  double largest = 0.0;
  for (Eigen::Index i = 0; i + 2 < step.size(); i += 3)
    largest = std::max(largest, step.segment<3>(i).norm());
  return largest;
}

// The point the descent has reached.
struct Descent {
  Eigen::VectorXd x;
  double energy = 0.0;
  Eigen::VectorXd gradient;
};

// What the last Hessian said about directions of negative curvature (rigid-body motions
// excluded); the direction is kept from the last Hessian that had any.
struct CurvatureSurvey {
  int negative_directions = 0;
  Eigen::VectorXd most_negative_direction;
};

// Stage 1: L-BFGS down to the hand-over gradient `target`. The point reached replaces the
// current one when it is finite and not higher. Returns the iterations taken.
int lbfgs_stage(const Potential& potential, Descent& at, double target, const MinimizeOptions& options) {
  const auto n = static_cast<double>(at.x.size());
  LBFGSpp::LBFGSParam<double> parameters;
  parameters.m = options.lbfgs_memory;
  // This L-BFGS version stops at |g| < ε·max(1, |x|); scale ε so that the test is on
  // the rms gradient at the starting |x| (Newton steps own the final criterion).
  parameters.epsilon = target * std::sqrt(n) / std::max(1.0, at.x.norm());
  parameters.max_iterations = options.lbfgs_max_iterations;
  parameters.max_linesearch = 60;
  LBFGSpp::LBFGSSolver<double> solver(parameters);
  int iterations = 0;
  auto objective = [&](const Eigen::VectorXd& trial, Eigen::VectorXd& trial_gradient) {
    return potential.energy_and_gradient(trial, trial_gradient);
  };
  Eigen::VectorXd trial = at.x;
  double trial_energy = at.energy;
  try {
    iterations = solver.minimize(objective, trial, trial_energy);
  } catch (const std::exception&) {
    // Line-search failure near round-off: keep the point reached and let Newton finish.
  }
  Eigen::VectorXd trial_gradient;
  const double final_energy = potential.energy_and_gradient(trial, trial_gradient);
  if (std::isfinite(final_energy) && trial_gradient.allFinite() && final_energy <= at.energy) {
    at.x = trial;
    at.energy = final_energy;
    at.gradient = trial_gradient;
  }
  return iterations;
}

// The Newton step on |λ| in the space orthogonal to rigid-body motions (unit masses) at the
// current point, and the survey of negative curvature there.
Eigen::VectorXd newton_step_at(const Potential& potential, const Descent& at, const MinimizeOptions& options,
                               CurvatureSurvey& survey) {
  const Eigen::Index n = at.x.size();
  const Eigen::VectorXd unit_masses = Eigen::VectorXd::Ones(n / 3);
  const Eigen::MatrixXd rigid = rigid_body_basis(at.x, unit_masses, options.linearity_tolerance);
  const Eigen::MatrixXd projector = Eigen::MatrixXd::Identity(n, n) - rigid * rigid.transpose();
  const auto projected_hessian = [&](double finite_difference_step) {
    HessianOptions step_options;
    step_options.finite_difference_step_angstrom = finite_difference_step;
    step_options.linearity_tolerance = options.linearity_tolerance;
    const Eigen::MatrixXd hessian = compute_hessian(potential, at.x, step_options).hessian;
    return Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd>(projector * hessian * projector);
  };
  const auto is_rigid = [&](const Eigen::VectorXd& v) { return (rigid.transpose() * v).squaredNorm() > 0.5; };
  const auto count_negative = [&](const Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd>& solver) {
    int count = 0;
    for (Eigen::Index k = 0; k < n; ++k)
      if (!is_rigid(solver.eigenvectors().col(k)) &&
          solver.eigenvalues()[k] < options.negative_curvature_threshold)
        ++count;
    return count;
  };
  Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> solver = projected_hessian(options.hessian_step_angstrom);
  // The Newton step's difference step carries a truncation error ∝ step² that can
  // exceed the curvature of a nearly free motion (a torsion about a C≡C axis: −0.005
  // at 0.005 Å, +0.003 kcal/mol/Å² at 0.0005 Å), so negative curvature is confirmed
  // with the finer step before a saddle is left or reported.
  if (count_negative(solver) > 0 && options.curvature_check_step_angstrom != options.hessian_step_angstrom)
    solver = projected_hessian(options.curvature_check_step_angstrom);
  Eigen::VectorXd newton_step = Eigen::VectorXd::Zero(n);
  survey.negative_directions = 0;
  double lowest_curvature = 0.0;
  const Eigen::VectorXd projected_gradient = projector * at.gradient;
  for (Eigen::Index k = 0; k < n; ++k) {
    const Eigen::VectorXd v = solver.eigenvectors().col(k);
    if (is_rigid(v)) continue;
    const double curvature = solver.eigenvalues()[k];
    if (curvature < options.negative_curvature_threshold) {
      ++survey.negative_directions;
      if (curvature < lowest_curvature) {
        lowest_curvature = curvature;
        survey.most_negative_direction = v;
      }
    }
    // |λ| keeps every step downhill; the floor avoids division by round-off.
    const double magnitude = std::max(std::abs(curvature), 1e-6);
    newton_step -= (v.dot(projected_gradient) / magnitude) * v;
  }
  return newton_step;
}

// Takes the step (cut to the trust radius) if it lowers the gradient or the energy,
// otherwise halves it, up to eight times. False when no length was accepted.
bool step_downhill(const Potential& potential, Descent& at, Eigen::VectorXd step,
                   const MinimizeOptions& options) {
  const double move = largest_atom_move(step);
  if (move > options.newton_max_atom_step_angstrom) step *= options.newton_max_atom_step_angstrom / move;
  for (int halving = 0; halving < 8; ++halving) {
    Eigen::VectorXd trial_gradient;
    const Eigen::VectorXd trial = at.x + step;
    const double trial_energy = potential.energy_and_gradient(trial, trial_gradient);
    if (std::isfinite(trial_energy) && trial_gradient.allFinite() &&
        (rms(trial_gradient) < rms(at.gradient) || trial_energy < at.energy)) {
      at.x = trial;
      at.energy = trial_energy;
      at.gradient = trial_gradient;
      return true;
    }
    step *= 0.5;
  }
  return false;
}

// Stage 2: Newton steps until the gradient criterion is met (the curvature is then known
// at the final point), a saddle is to be left, or a step fails.
void newton_stage(const Potential& potential, Descent& at, const MinimizeOptions& options,
                  CurvatureSurvey& survey, MinimizeResult& result) {
  for (int step = 0; step < options.newton_max_steps; ++step) {
    const Eigen::VectorXd newton_step = newton_step_at(potential, at, options, survey);
    if (rms(at.gradient) <= options.rms_gradient_tolerance) return;
    // Negative curvature: leaving downhill along it beats Newton steps on |λ|.
    if (survey.negative_directions > 0 && result.saddle_escapes < options.max_saddle_escapes) return;
    const bool accepted = step_downhill(potential, at, newton_step, options);
    ++result.newton_steps;
    if (!accepted) return;
  }
}

// Leave the saddle (or the region of negative curvature) downhill along the most
// negative curvature direction.
void leave_saddle(const Potential& potential, Descent& at, const Eigen::VectorXd& direction,
                  const MinimizeOptions& options) {
  const double sign = direction.dot(at.gradient) > 0.0 ? -1.0 : 1.0;
  at.x += sign * direction * (options.saddle_escape_step_angstrom / largest_atom_move(direction));
  at.energy = potential.energy_and_gradient(at.x, at.gradient);
}

// The status and message of a finished minimization (its point and counts already set).
void judge(MinimizeResult& result, const Descent& end, const Eigen::VectorXd& start,
           const MinimizeOptions& options) {
  const Eigen::VectorXd& x = end.x;
  const double energy = end.energy;
  const double atoms = static_cast<double>(x.size()) / 3.0;
  const double start_extent = extent(start);
  const double end_extent = x.allFinite() ? extent(x) : std::numeric_limits<double>::infinity();
  const double expansion_limit = 2.0 * start_extent + options.max_expansion_angstrom;
  const bool finite = std::isfinite(energy) && end.gradient.allFinite();
  if (!finite || !x.allFinite() || std::abs(energy) > options.max_energy_per_atom_kcal_mol * atoms ||
      end_extent > expansion_limit) {
    result.status = MinimizeStatus::diverged;
    std::string reason;
    if (!x.allFinite() || end_extent > expansion_limit)
      reason =
          fmt::format("an atom ended {:.3g} Å from the centre of the molecule (it started within {:.3g} Å)",
                      end_extent, start_extent);
    else if (!finite)
      reason =
          fmt::format("the energy ({:.3g} kcal/mol) or the gradient (rms {:.3g} kcal/mol/Å) is not finite",
                      energy, result.rms_gradient);
    else
      reason = fmt::format("the energy reached {:.3g} kcal/mol, beyond {:.0e} kcal/mol per atom", energy,
                           options.max_energy_per_atom_kcal_mol);
    result.message = fmt::format(
        "the optimization diverged: {} after {} L-BFGS iterations and {} Newton steps; the potential is "
        "absurd (check the magnitudes and units of its constants) or not bound at this structure",
        reason, result.lbfgs_iterations, result.newton_steps);
  } else if (result.rms_gradient > options.rms_gradient_tolerance) {
    result.status = MinimizeStatus::not_converged;
    result.message = fmt::format(
        "optimization stopped with rms gradient {:.2e} kcal/mol/Å above the criterion {:.1e} after {} L-BFGS "
        "iterations and {} Newton steps",
        result.rms_gradient, options.rms_gradient_tolerance, result.lbfgs_iterations, result.newton_steps);
  } else if (result.negative_curvature_directions > 0) {
    result.status = MinimizeStatus::saddle_point;
    result.message = fmt::format(
        "stationary point with {} direction(s) of negative curvature: a saddle point, "
        "not a minimum",
        result.negative_curvature_directions);
  } else {
    result.status = MinimizeStatus::converged;
    result.message = fmt::format("converged: rms gradient {:.2e} kcal/mol/Å (criterion {:.1e})",
                                 result.rms_gradient, options.rms_gradient_tolerance);
    if (result.saddle_escapes > 0)
      result.message += fmt::format(" after leaving {} saddle point(s) downhill", result.saddle_escapes);
  }
}

}  // namespace

void MinimizeOptions::validate() const {
  using namespace option_checks;
  const char* owner = "minimize";
  require_positive(owner, "rms_gradient_tolerance", rms_gradient_tolerance);
  require_positive(owner, "lbfgs_rms_gradient_target", lbfgs_rms_gradient_target);
  require_at_least(owner, "lbfgs_max_iterations", lbfgs_max_iterations, 0);
  require_at_least(owner, "lbfgs_memory", lbfgs_memory, 1);
  require_at_least(owner, "newton_max_steps", newton_max_steps, 0);
  require_at_least(owner, "max_refinement_rounds", max_refinement_rounds, 0);
  require_in_left_open(owner, "refinement_target_factor", refinement_target_factor, 0.0, 1.0);
  require_positive(owner, "newton_max_atom_step_angstrom", newton_max_atom_step_angstrom);
  require_positive(owner, "hessian_step_angstrom", hessian_step_angstrom);
  require_positive(owner, "curvature_check_step_angstrom", curvature_check_step_angstrom);
  require(negative_curvature_threshold <= 0.0, owner, "negative_curvature_threshold", "a number <= 0",
          negative_curvature_threshold);
  require_at_least(owner, "max_saddle_escapes", max_saddle_escapes, 0);
  require_positive(owner, "saddle_escape_step_angstrom", saddle_escape_step_angstrom);
  require_positive(owner, "max_energy_per_atom_kcal_mol", max_energy_per_atom_kcal_mol);
  require_positive(owner, "max_expansion_angstrom", max_expansion_angstrom);
  require_in_open(owner, "linearity_tolerance", linearity_tolerance, 0.0, 1.0);
}

std::string to_string(MinimizeStatus status) {
  switch (status) {
    case MinimizeStatus::converged:
      return "converged";
    case MinimizeStatus::not_converged:
      return "not converged";
    case MinimizeStatus::saddle_point:
      return "saddle point";
    case MinimizeStatus::diverged:
      return "diverged";
  }
  return "unknown";
}

MinimizeResult minimize(const Potential& potential, const Eigen::VectorXd& start_angstrom,
                        const MinimizeOptions& options) {
  options.validate();
  const EvaluationCounts before = potential.counts();
  MinimizeResult result;
  result.rms_gradient_tolerance = options.rms_gradient_tolerance;
  Descent at;
  at.x = start_angstrom;
  at.energy = potential.energy_and_gradient(at.x, at.gradient);
  if (!std::isfinite(at.energy) || !at.gradient.allFinite())
    throw Error("the potential gives a non-finite energy or gradient at the starting geometry");

  CurvatureSurvey survey;
  double lbfgs_target = options.lbfgs_rms_gradient_target;
  int refinements = 0;
  for (;;) {
    if (rms(at.gradient) > lbfgs_target && options.lbfgs_max_iterations > 0)
      result.lbfgs_iterations += lbfgs_stage(potential, at, lbfgs_target, options);
    newton_stage(potential, at, options, survey, result);
    // Newton steps are straight lines in Cartesian space: along a nearly free torsion
    // (a methyl group turning about a C≡C axis) a step long enough to matter also
    // stretches the bonds it turns, so they stall. L-BFGS, with a tighter hand-over
    // gradient, follows such a valley; then Newton steps finish.
    if (survey.negative_directions == 0 && rms(at.gradient) > options.rms_gradient_tolerance &&
        refinements < options.max_refinement_rounds && options.lbfgs_max_iterations > 0) {
      ++refinements;
      lbfgs_target =
          std::max(options.rms_gradient_tolerance, lbfgs_target * options.refinement_target_factor);
      continue;
    }
    if (survey.negative_directions == 0 || result.saddle_escapes >= options.max_saddle_escapes) break;
    ++result.saddle_escapes;
    leave_saddle(potential, at, survey.most_negative_direction, options);  // then minimize again
  }

  result.coordinates_angstrom = at.x;
  result.energy_kcal_mol = at.energy;
  result.rms_gradient = rms(at.gradient);
  result.max_gradient = at.gradient.size() > 0 ? at.gradient.cwiseAbs().maxCoeff() : 0.0;
  result.negative_curvature_directions = survey.negative_directions;
  const EvaluationCounts& after = potential.counts();
  result.energy_evaluations = after.energies - before.energies;
  result.gradient_evaluations = after.gradients - before.gradients;
  result.hessian_evaluations = after.hessians - before.hessians;
  judge(result, at, start_angstrom, options);
  return result;
}

}  // namespace overtone
