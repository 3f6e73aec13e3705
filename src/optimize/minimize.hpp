#pragma once
// Geometry optimization to a minimum tight enough for a Hessian: L-BFGS to bring the
// gradient down, then Newton steps on the Hessian (rigid-body directions removed) to
// reach the final criterion.
//
// Convergence criterion (stated for users): root-mean-square Cartesian gradient
// below rms_gradient_tolerance (default 1e-6 kcal/mol/Å). A finite-difference Hessian
// with a 0.005 Å step sees gradients of order 1e-2 kcal/mol/Å, four orders above it.
#include <Eigen/Dense>
#include <string>
#include <vector>

#include "harmonic/harmonic.hpp"
#include "potential/potential.hpp"

namespace overtone {

struct MinimizeOptions {
  double rms_gradient_tolerance = 1e-6;     // kcal/mol/Å, final criterion
  double lbfgs_rms_gradient_target = 1e-3;  // kcal/mol/Å, hand over to Newton below this
  int lbfgs_max_iterations = 5000;
  int lbfgs_memory = 8;  // number of correction pairs
  int newton_max_steps = 12;
  // When the Newton steps stop short of the criterion, L-BFGS runs again with its
  // hand-over gradient multiplied by refinement_target_factor, at most
  // max_refinement_rounds times.
  int max_refinement_rounds = 2;
  double refinement_target_factor = 1e-2;
  double newton_max_atom_step_angstrom = 0.1;  // trust radius: largest move of any atom per step
  // Hessian for Newton steps: analytic where available, else this central-difference step.
  double hessian_step_angstrom = 0.005;
  // Negative curvature seen with that step is confirmed with this finer one (the
  // harmonic stage's default) before a saddle point is left or reported.
  double curvature_check_step_angstrom = 5e-4;
  // Curvature (kcal/mol/Å²) below which a direction counts as negative at the end.
  double negative_curvature_threshold = -1e-3;
  // On reaching a saddle point, step downhill along the most negative curvature
  // direction (largest atom move saddle_escape_step_angstrom) and minimize again, at
  // most max_saddle_escapes times. Symmetric starting structures often stop on one.
  int max_saddle_escapes = 3;
  double saddle_escape_step_angstrom = 0.05;
  // An optimization has diverged when it ends with a non-finite energy or gradient,
  // with |energy| above this bound times the atom count (kcal/mol; bond energies are
  // ~100 kcal/mol, so 1e5 per atom only catches absurd constants or units), or with an
  // atom farther from the centroid than twice the starting extent plus
  // max_expansion_angstrom (the structure flew apart).
  double max_energy_per_atom_kcal_mol = 1e5;
  double max_expansion_angstrom = 20.0;
  // Linearity test of the rigid-body basis removed from the Newton steps (see
  // default_linearity_tolerance in harmonic/harmonic.hpp).
  double linearity_tolerance = default_linearity_tolerance;

  void validate() const;  // throws Error naming the field that is out of range
};

// diverged: the result is meaningless (see MinimizeOptions); stages must not use it.
enum class MinimizeStatus { converged, not_converged, saddle_point, diverged };

struct MinimizeResult {
  MinimizeStatus status = MinimizeStatus::not_converged;
  std::string message;
  Eigen::VectorXd coordinates_angstrom;
  double energy_kcal_mol = 0.0;
  double rms_gradient = 0.0;  // kcal/mol/Å
  double max_gradient = 0.0;  // largest |component|, kcal/mol/Å
  int lbfgs_iterations = 0;
  int newton_steps = 0;
  int negative_curvature_directions = 0;  // of the last Hessian, rigid-body motions excluded
  int saddle_escapes = 0;                 // times a saddle point was left downhill
  std::size_t energy_evaluations = 0;
  std::size_t gradient_evaluations = 0;
  std::size_t hessian_evaluations = 0;
  double rms_gradient_tolerance = 0.0;  // the criterion actually used
  bool converged() const { return status == MinimizeStatus::converged; }
  bool diverged() const { return status == MinimizeStatus::diverged; }
};

// Throws Error for invalid options or a non-finite energy/gradient at the start.
MinimizeResult minimize(const Potential& potential, const Eigen::VectorXd& start_angstrom,
                        const MinimizeOptions& options = {});

std::string to_string(MinimizeStatus status);

}  // namespace overtone
