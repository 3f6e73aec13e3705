#pragma once
// A potential that is itself a Taylor expansion to fourth order about a reference
// geometry, read from (or written to) a TOML file of our own design
// (docs/taylor-expansion-format.md), so that a quartic force field computed elsewhere can
// be used by every stage of Overtone.
//
// Contract of the potential:
//   V(x) = E_ref + Σ_n Σ_{i₁≤…≤i_n} d_{i₁…i_n} Π_i u_i^{p_i} / p_i!
// where d are the derivatives ∂ⁿV/∂u_{i₁}…∂u_{i_n} of the file (each listed once, any index
// order), p_i how often index i occurs, and the expansion variables u are either
//   cartesian: u = x_file − x_ref (Å), or
//   normal:    u = q, the dimensionless normal coordinates of the file's own harmonic
//              analysis, q_k = sqrt(ω_k/ħ)·l_kᵀ M^{1/2}(x_file − x_ref) with l_k the
//              mass-weighted, orthonormalized mode vectors; the harmonic part ½ω_k q_k²
//              comes from the listed frequencies and the cubic and quartic derivatives
//              are the φ of the anharmonic stage (V = … + (1/6)Σφ_ijk q_i q_j q_k + …).
// x_file is the molecule's geometry carried rigidly into the file's frame: the loader
// finds the rotation and translation that best superimpose the molecule (as given) on the
// reference (mass-weighted, proper rotation) and applies that same fixed transform to
// every later geometry. Energies kcal/mol, gradients kcal/mol/Å, Hessians kcal/mol/Å²
// (analytic). A truncated expansion is not rotationally invariant beyond second order;
// near the reference this does not matter for vibrational analysis.
//
// Holes: a quartic expansion usually turns over and falls below its minimum far from
// the reference. Every evaluation below (estimated minimum − hole_depth_cm1) throws Error
// with the displacement where it happened, unless the guard is switched off; see also
// scan_normal_coordinates (families stage) for a check before a long calculation.
#include <Eigen/Dense>
#include <memory>
#include <string>
#include <vector>

#include "core/molecule.hpp"
#include "potential/potential.hpp"

namespace overtone {

enum class ExpansionCoordinates { cartesian, normal };

// One listed derivative: 0-based indices (Cartesian coordinate 3·atom + axis, or mode),
// value in kcal/mol per unit of u to the power of the order.
struct ExpansionDerivative {
  std::vector<int> indices;
  double value = 0.0;
};

// Everything a file holds, in internal units.
struct TaylorExpansionData {
  std::string title;
  std::string source;  // free text: where the constants come from
  ExpansionCoordinates coordinates = ExpansionCoordinates::cartesian;
  std::vector<int> atomic_numbers;
  Eigen::VectorXd masses_da;           // N; required for normal coordinates, may be empty otherwise
  Eigen::VectorXd reference_angstrom;  // 3N, x_ref
  double reference_energy_kcal_mol = 0.0;
  // Normal coordinates only: ω_k (cm⁻¹) and the Cartesian displacement pattern of each
  // mode (3N × M, any normalization; orthonormalized after mass weighting).
  Eigen::VectorXd frequencies_cm1;
  Eigen::MatrixXd mode_displacements;
  // Orders 1 to 4; the harmonic part of the normal form is implied by frequencies_cm1 and
  // must not be listed.
  std::vector<ExpansionDerivative> derivatives;
};

struct TaylorExpansionOptions {
  // Evaluations more than this (cm⁻¹) below the expansion's estimated minimum
  // E_ref − ½ gᵀH⁺g throw Error: the surface has turned over. 0 < value.
  double hole_depth_cm1 = 10.0;
  bool guard_holes = true;
  // Largest distance (Å) allowed between an atom of the molecule, superimposed on the
  // reference, and the same atom of the reference.
  double superposition_tolerance_angstrom = 0.5;
  // Normal form: mode vectors (mass-weighted, normalized) may deviate from orthonormal,
  // and from orthogonal to translations and rotations, by this much (largest overlap)
  // before they are rejected; below it they are orthonormalized (Löwdin). Files printed
  // with 5–6 significant digits stay well inside it.
  double mode_orthogonality_tolerance = 1e-3;
};

class TaylorExpansionPotential : public Potential {
 public:
  // Binds the expansion to the molecule (same atom count and elements in the same
  // order). Throws Error on inconsistent data or a molecule that does not match.
  TaylorExpansionPotential(TaylorExpansionData data, const Molecule& molecule,
                           const TaylorExpansionOptions& options = {});

  std::string description() const override;
  std::size_t atom_count() const override { return static_cast<std::size_t>(data_.atomic_numbers.size()); }
  bool has_analytic_hessian() const override { return true; }
  // The evaluation reads only the expansion loaded at construction.
  bool supports_concurrent_evaluation() const override { return true; }

  const TaylorExpansionData& data() const { return data_; }
  // Energy (kcal/mol) below which evaluations throw: the estimated minimum minus the depth.
  double hole_threshold_kcal_mol() const { return hole_threshold_; }
  // The molecule's reference-frame image of the file's reference geometry (Å): where the
  // expansion is centred, in the molecule's frame.
  Eigen::VectorXd reference_in_molecule_frame() const;
  void set_hole_guard(bool enabled) { options_.guard_holes = enabled; }

 protected:
  double compute_energy(const Eigen::VectorXd& x) const override;
  double compute_energy_and_gradient(const Eigen::VectorXd& x, Eigen::VectorXd& gradient) const override;
  Eigen::MatrixXd compute_hessian(const Eigen::VectorXd& x) const override;

 private:
  struct Term {
    std::vector<std::pair<int, int>> factors;  // (variable, power)
    double coefficient;                        // d / Π power!
  };
  // Value, gradient and Hessian of the polynomial in the variables u.
  double evaluate(const Eigen::VectorXd& u, Eigen::VectorXd* gradient, Eigen::MatrixXd* hessian) const;
  Eigen::VectorXd variables(const Eigen::VectorXd& x) const { return transform_ * x + offset_; }
  void guard(double energy, const Eigen::VectorXd& x) const;

  TaylorExpansionData data_;
  TaylorExpansionOptions options_;
  std::vector<Term> terms_;
  Eigen::MatrixXd transform_;  // u = transform_ · x + offset_
  Eigen::VectorXd offset_;
  double hole_threshold_ = 0.0;
};

// Reads a file (format: docs/taylor-expansion-format.md). Throws Error on a missing or
// malformed file (message names the file and the key) or a molecule mismatch.
TaylorExpansionData read_taylor_expansion(const std::string& path);
TaylorExpansionData parse_taylor_expansion(const std::string& toml_text, const std::string& origin);

std::unique_ptr<Potential> load_taylor_expansion_potential(const std::string& path, const Molecule& molecule);
std::unique_ptr<Potential> load_taylor_expansion_potential(const std::string& path, const Molecule& molecule,
                                                           const TaylorExpansionOptions& options);

// True when the file is TOML with format = "overtone-taylor-expansion" (for dispatching
// --potential between file kinds); false for any other or unreadable file.
bool is_taylor_expansion_file(const std::string& path);

struct TaylorWriteOptions {
  // Energy unit of the written derivatives: "hartree", "kcal/mol", "kJ/mol", "aJ" or "cm-1".
  std::string energy_unit = "cm-1";
  // Length unit of positions and Cartesian derivatives: "angstrom" or "bohr".
  std::string length_unit = "angstrom";
  // Derivatives with |value| below this fraction of the largest of their order are left out.
  double relative_threshold = 1e-12;
};

// The file text for the data. Throws Error for an unknown unit.
std::string write_taylor_expansion(const TaylorExpansionData& data, const TaylorWriteOptions& options = {});

}  // namespace overtone
