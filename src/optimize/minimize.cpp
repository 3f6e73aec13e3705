#include "optimize/minimize.hpp"

#include <LBFGS.h>
#include <fmt/format.h>

#include <cmath>
#include <limits>
#include <stdexcept>

#include "core/error.hpp"
#include "harmonic/harmonic.hpp"

namespace overtone {

namespace {

void check_options(const MinimizeOptions& o) {
  auto positive = [](double value, const char* name) {
    if (!(value > 0.0)) throw Error(fmt::format("minimize option {} must be positive, got {}", name, value));
  };
  positive(o.rms_gradient_tolerance, "rms_gradient_tolerance");
  positive(o.lbfgs_rms_gradient_target, "lbfgs_rms_gradient_target");
  positive(o.newton_max_atom_step_angstrom, "newton_max_atom_step_angstrom");
  positive(o.hessian_step_angstrom, "hessian_step_angstrom");
  positive(o.curvature_check_step_angstrom, "curvature_check_step_angstrom");
  positive(o.max_energy_per_atom_kcal_mol, "max_energy_per_atom_kcal_mol");
  positive(o.max_expansion_angstrom, "max_expansion_angstrom");
  if (o.max_refinement_rounds < 0)
    throw Error(fmt::format("minimize option max_refinement_rounds must be non-negative, got {}",
                            o.max_refinement_rounds));
  if (!(o.refinement_target_factor > 0.0 && o.refinement_target_factor <= 1.0))
    throw Error(fmt::format("minimize option refinement_target_factor must lie in (0, 1], got {}",
                            o.refinement_target_factor));
  if (o.lbfgs_max_iterations < 0 || o.newton_max_steps < 0 || o.lbfgs_memory < 1)
    throw Error(
        "minimize options lbfgs_max_iterations and newton_max_steps must be non-negative and "
        "lbfgs_memory positive");
}

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

}  // namespace

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
  check_options(options);
  const EvaluationCounts before = potential.counts();
  const Eigen::Index n = start_angstrom.size();
  MinimizeResult result;
  result.rms_gradient_tolerance = options.rms_gradient_tolerance;
  Eigen::VectorXd x = start_angstrom;
  Eigen::VectorXd gradient;
  double energy = potential.energy_and_gradient(x, gradient);
  if (!std::isfinite(energy) || !gradient.allFinite())
    throw Error("the potential gives a non-finite energy or gradient at the starting geometry");

  const Eigen::VectorXd unit_masses = Eigen::VectorXd::Ones(n / 3);
  HessianOptions hessian_options;
  hessian_options.finite_difference_step_angstrom = options.hessian_step_angstrom;
  int negative_directions = 0;
  Eigen::VectorXd most_negative_direction;

  double lbfgs_target = options.lbfgs_rms_gradient_target;
  int refinements = 0;
  for (;;) {
    // Stage 1: L-BFGS down to the hand-over gradient.
    if (rms(gradient) > lbfgs_target && options.lbfgs_max_iterations > 0) {
      LBFGSpp::LBFGSParam<double> parameters;
      parameters.m = options.lbfgs_memory;
      // This L-BFGS version stops at |g| < ε·max(1, |x|); scale ε so that the test is on
      // the rms gradient at the starting |x| (Newton steps own the final criterion).
      parameters.epsilon = lbfgs_target * std::sqrt(static_cast<double>(n)) / std::max(1.0, x.norm());
      parameters.max_iterations = options.lbfgs_max_iterations;
      parameters.max_linesearch = 60;
      LBFGSpp::LBFGSSolver<double> solver(parameters);
      int iterations = 0;
      auto objective = [&](const Eigen::VectorXd& trial, Eigen::VectorXd& trial_gradient) {
        return potential.energy_and_gradient(trial, trial_gradient);
      };
      Eigen::VectorXd trial = x;
      double trial_energy = energy;
      try {
        iterations = solver.minimize(objective, trial, trial_energy);
      } catch (const std::exception&) {
        // Line-search failure near round-off: keep the point reached and let Newton finish.
      }
      result.lbfgs_iterations += iterations;
      Eigen::VectorXd trial_gradient;
      const double final_energy = potential.energy_and_gradient(trial, trial_gradient);
      if (std::isfinite(final_energy) && trial_gradient.allFinite() && final_energy <= energy) {
        x = trial;
        energy = final_energy;
        gradient = trial_gradient;
      }
    }

    // Stage 2: Newton steps in the space orthogonal to rigid-body motions (unit masses).
    for (int step = 0; step < options.newton_max_steps; ++step) {
      const Eigen::MatrixXd rigid = rigid_body_basis(x, unit_masses, NormalModeOptions{}.linearity_tolerance);
      const Eigen::MatrixXd projector = Eigen::MatrixXd::Identity(n, n) - rigid * rigid.transpose();
      const auto projected_hessian = [&](double finite_difference_step) {
        HessianOptions step_options = hessian_options;
        step_options.finite_difference_step_angstrom = finite_difference_step;
        const Eigen::MatrixXd hessian = compute_hessian(potential, x, step_options).hessian;
        return Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd>(projector * hessian * projector);
      };
      const auto count_negative = [&](const Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd>& solver) {
        int count = 0;
        for (Eigen::Index k = 0; k < n; ++k)
          if ((rigid.transpose() * solver.eigenvectors().col(k)).squaredNorm() <= 0.5 &&
              solver.eigenvalues()[k] < options.negative_curvature_threshold)
            ++count;
        return count;
      };
      Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> solver =
          projected_hessian(options.hessian_step_angstrom);
      // The Newton step's difference step carries a truncation error ∝ step² that can
      // exceed the curvature of a nearly free motion (a torsion about a C≡C axis: −0.005
      // at 0.005 Å, +0.003 kcal/mol/Å² at 0.0005 Å), so negative curvature is confirmed
      // with the finer step before a saddle is left or reported.
      if (count_negative(solver) > 0 &&
          options.curvature_check_step_angstrom != options.hessian_step_angstrom)
        solver = projected_hessian(options.curvature_check_step_angstrom);
      Eigen::VectorXd newton_step = Eigen::VectorXd::Zero(n);
      negative_directions = 0;
      double lowest_curvature = 0.0;
      const Eigen::VectorXd projected_gradient = projector * gradient;
      for (Eigen::Index k = 0; k < n; ++k) {
        const Eigen::VectorXd v = solver.eigenvectors().col(k);
        if ((rigid.transpose() * v).squaredNorm() > 0.5) continue;  // a rigid-body direction
        const double curvature = solver.eigenvalues()[k];
        if (curvature < options.negative_curvature_threshold) {
          ++negative_directions;
          if (curvature < lowest_curvature) {
            lowest_curvature = curvature;
            most_negative_direction = v;
          }
        }
        // |λ| keeps every step downhill; the floor avoids division by round-off.
        const double magnitude = std::max(std::abs(curvature), 1e-6);
        newton_step -= (v.dot(projected_gradient) / magnitude) * v;
      }
      if (rms(gradient) <= options.rms_gradient_tolerance) break;  // curvature now known at the final point
      // Negative curvature: leaving downhill along it beats Newton steps on |λ|.
      if (negative_directions > 0 && result.saddle_escapes < options.max_saddle_escapes) break;
      const double move = largest_atom_move(newton_step);
      if (move > options.newton_max_atom_step_angstrom)
        newton_step *= options.newton_max_atom_step_angstrom / move;
      // Accept the step if it lowers the gradient or the energy; otherwise halve it.
      bool accepted = false;
      for (int halving = 0; halving < 8 && !accepted; ++halving) {
        Eigen::VectorXd trial_gradient;
        const Eigen::VectorXd trial = x + newton_step;
        const double trial_energy = potential.energy_and_gradient(trial, trial_gradient);
        if (std::isfinite(trial_energy) && trial_gradient.allFinite() &&
            (rms(trial_gradient) < rms(gradient) || trial_energy < energy)) {
          x = trial;
          energy = trial_energy;
          gradient = trial_gradient;
          accepted = true;
        } else {
          newton_step *= 0.5;
        }
      }
      ++result.newton_steps;
      if (!accepted) break;
    }

    // Newton steps are straight lines in Cartesian space: along a nearly free torsion
    // (a methyl group turning about a C≡C axis) a step long enough to matter also
    // stretches the bonds it turns, so they stall. L-BFGS, with a tighter hand-over
    // gradient, follows such a valley; then Newton steps finish.
    if (negative_directions == 0 && rms(gradient) > options.rms_gradient_tolerance &&
        refinements < options.max_refinement_rounds && options.lbfgs_max_iterations > 0) {
      ++refinements;
      lbfgs_target =
          std::max(options.rms_gradient_tolerance, lbfgs_target * options.refinement_target_factor);
      continue;
    }
    if (negative_directions == 0 || result.saddle_escapes >= options.max_saddle_escapes) break;
    // Leave the saddle (or the region of negative curvature) downhill along the most
    // negative curvature direction, then minimize again.
    ++result.saddle_escapes;
    const double sign = most_negative_direction.dot(gradient) > 0.0 ? -1.0 : 1.0;
    const Eigen::VectorXd push =
        sign * most_negative_direction *
        (options.saddle_escape_step_angstrom / largest_atom_move(most_negative_direction));
    x += push;
    energy = potential.energy_and_gradient(x, gradient);
  }

  result.coordinates_angstrom = x;
  result.energy_kcal_mol = energy;
  result.rms_gradient = rms(gradient);
  result.max_gradient = gradient.size() > 0 ? gradient.cwiseAbs().maxCoeff() : 0.0;
  result.negative_curvature_directions = negative_directions;
  const EvaluationCounts& after = potential.counts();
  result.energy_evaluations = after.energies - before.energies;
  result.gradient_evaluations = after.gradients - before.gradients;
  result.hessian_evaluations = after.hessians - before.hessians;

  const double atoms = static_cast<double>(n) / 3.0;
  const double start_extent = extent(start_angstrom);
  const double end_extent = x.allFinite() ? extent(x) : std::numeric_limits<double>::infinity();
  const double expansion_limit = 2.0 * start_extent + options.max_expansion_angstrom;
  if (!std::isfinite(energy) || !gradient.allFinite() || !x.allFinite() ||
      std::abs(energy) > options.max_energy_per_atom_kcal_mol * atoms || end_extent > expansion_limit) {
    result.status = MinimizeStatus::diverged;
    std::string reason;
    if (!x.allFinite() || end_extent > expansion_limit)
      reason =
          fmt::format("an atom ended {:.3g} Å from the centre of the molecule (it started within {:.3g} Å)",
                      end_extent, start_extent);
    else if (!std::isfinite(energy) || !gradient.allFinite())
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
  } else if (negative_directions > 0) {
    result.status = MinimizeStatus::saddle_point;
    result.message = fmt::format(
        "stationary point with {} direction(s) of negative curvature: a saddle point, "
        "not a minimum",
        negative_directions);
  } else {
    result.status = MinimizeStatus::converged;
    result.message = fmt::format("converged: rms gradient {:.2e} kcal/mol/Å (criterion {:.1e})",
                                 result.rms_gradient, options.rms_gradient_tolerance);
    if (result.saddle_escapes > 0)
      result.message += fmt::format(" after leaving {} saddle point(s) downhill", result.saddle_escapes);
  }
  return result;
}

}  // namespace overtone
