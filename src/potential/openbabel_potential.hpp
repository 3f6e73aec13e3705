#pragma once
// Open Babel's general force fields (MMFF94, MMFF94s, UFF, GAFF, Ghemical) behind the
// Potential interface.
//
// Gradients: Open Babel returns forces (−dE/dx) in the force field's own energy unit
// (kcal/mol for MMFF94/MMFF94s, kJ/mol for UFF, GAFF and Ghemical); both sign and unit
// are converted here. Its analytic gradient of the out-of-plane term disagrees with the
// energy for MMFF94 and UFF (measured: errors of order 10% of that term's gradient at
// trigonal centres), which would make a tight optimization and a finite-difference
// Hessian inconsistent with the energy. That term's gradient is therefore replaced;
// every other term keeps its analytic gradient.
//
// For MMFF94, MMFF94s and UFF the out-of-plane energy is linear in one or two
// parameters per three-coordinate centre times geometry functions of the Wilson angles
// (detail_out_of_plane_model.hpp). Those parameters are fitted once, at construction,
// to Open Babel's own out-of-plane energy at randomly displaced geometries and checked
// at fresh ones; when the check passes, the out-of-plane gradient is the model's exact
// analytic one. Otherwise (a term of another form, an unusual centre), and for GAFF and
// Ghemical, it is central differences of Open Babel's out-of-plane energy over the
// atoms that take part in out-of-plane terms, which costs two energy calls per
// coordinate (each an OpenMP parallel region in Open Babel, measured at 1.5–4 µs apiece even on
// one thread).
// out_of_plane_gradient_note() says which, and why.
//
// Linear triples: Open Babel's angle code returns 0° instead of 180° (and zero
// derivatives) within about 1e-4° of linearity, and non-finite torsion derivatives at
// exact collinearity (detail_linear_limit.hpp has the details). At a geometry with a
// bonded triple that close to linear (X–C≡N and C–C≡C made exactly linear by
// symmetrization, CO₂), energy and gradient are the symmetric limit of ordinary
// evaluations just off linearity, so that they are continuous and finite there;
// elsewhere they are Open Babel's own, unchanged.
//
// UFF torsions: Open Babel's UFF reads a stale or uninitialized barrier for every torsion
// about a bond with an sp atom (detail_uff_torsions.hpp); UFF's torsion term is therefore
// evaluated here, with Open Babel's atom types and parameter file, and Open Babel's is
// left out.
#include <memory>
#include <set>
#include <string>
#include <vector>

#include "potential/detail_linear_limit.hpp"
#include "potential/detail_out_of_plane_model.hpp"
#include "potential/detail_uff_torsions.hpp"
#include "potential/potential.hpp"

namespace OpenBabel {
class OBForceField;
class OBMol;
}  // namespace OpenBabel

namespace overtone {

struct OpenBabelPotentialOptions {
  // Central-difference step (Å) for the out-of-plane energy gradient: truncation error
  // ∝ step², round-off ∝ ε·E_oop/step; 1e-5 Å keeps both below 1e-9 kcal/mol/Å.
  double out_of_plane_difference_step_angstrom = 1e-5;
  // Use the fitted analytic out-of-plane model where its check passes; false always
  // differences (for comparisons and as an escape should the model ever be doubted).
  bool analytic_out_of_plane = true;
  // Where and how exactly linear bonded triples are evaluated by their limit.
  detail::LinearLimitOptions linear_limit;
  // A one-sided slope of the energy at an exactly linear triple (kcal/mol/Å along the
  // limit's displacement) above this is reported as a cusp: the force field's reference
  // angle there is not 180° (GAFF's c3–c1–n1 is 178.5°). The smooth case leaves
  // ≲ 1e-5 (the O(h²) remainder of the slope estimate, MMFF94's cubic bend at most) plus
  // round-off ~1e-8 for energies of 1000 kcal/mol; a reference angle 0.03° off linear
  // already gives ~0.1.
  double linear_cusp_slope_kcal_mol_per_angstrom = 1e-3;

  void validate() const;  // throws Error naming the field that is out of range
};

class OpenBabelPotential final : public Potential {
 public:
  // Throws Error if the name is not one of the supported force fields or the force
  // field cannot assign parameters to the molecule.
  OpenBabelPotential(const std::string& force_field_name, const Molecule& molecule,
                     const OpenBabelPotentialOptions& options = {});
  ~OpenBabelPotential() override;

  std::string description() const override;
  // Outside the force field's parameterization (radicals, multiply charged or inorganic
  // ions), and cusps met at exactly linear angles so far.
  std::vector<std::string> warnings() const override;
  std::size_t atom_count() const override { return atom_count_; }
  const std::string& force_field_name() const { return name_; }
  // Number of atoms that take part in out-of-plane terms (their gradient is corrected).
  std::size_t out_of_plane_atom_count() const { return out_of_plane_atoms_.size(); }
  // True when the out-of-plane gradient comes from the fitted analytic model.
  bool out_of_plane_is_analytic() const { return out_of_plane_model_ != nullptr; }
  // Why the out-of-plane gradient is differenced; empty when it is analytic or there
  // are no out-of-plane terms.
  const std::string& out_of_plane_gradient_note() const { return out_of_plane_note_; }
  // Largest |model − Open Babel| out-of-plane energy at the fit's check geometries,
  // relative to the largest out-of-plane energy there (0 without a fit).
  double out_of_plane_fit_residual() const { return out_of_plane_fit_residual_; }
  // Open Babel's out-of-plane energy alone, kcal/mol.
  double openbabel_out_of_plane_energy(const Eigen::VectorXd& x) const;
  // The fitted model's out-of-plane energy, kcal/mol; throws Error when there is no
  // model (out_of_plane_is_analytic() is false).
  double modelled_out_of_plane_energy(const Eigen::VectorXd& x) const;

  // The force field's own analytic gradient without the out-of-plane correction,
  // kcal/mol/Å (for tests that check Open Babel against its energy).
  Eigen::VectorXd raw_openbabel_gradient(const Eigen::VectorXd& x) const;
  // Open Babel's total energy at x as the library computes it, kcal/mol, without the
  // linear limit (for tests that show what the limit corrects).
  double raw_openbabel_energy(const Eigen::VectorXd& x) const;
  // Open Babel's torsion energy alone, kcal/mol.
  double openbabel_torsion_energy(const Eigen::VectorXd& x) const;
  // UFF only: the torsion energy this potential uses instead of Open Babel's, kcal/mol
  // (throws Error for the other force fields).
  double uff_torsion_energy(const Eigen::VectorXd& x) const;
  // True when x has a bonded triple so close to linear that energy and gradient there are
  // taken as the limit (see the class comment).
  bool uses_linear_limit(const Eigen::VectorXd& x) const;

 protected:
  double compute_energy(const Eigen::VectorXd& x) const override;
  double compute_energy_and_gradient(const Eigen::VectorXd& x, Eigen::VectorXd& gradient) const override;

 private:
  void load_coordinates(const Eigen::VectorXd& x) const;
  void set_up_out_of_plane_model(const Eigen::VectorXd& x);
  // Which of the force field's terms an ordinary evaluation sums: all of them, those that
  // depend on bond angles (angle, stretch–bend, torsion) or the others (stretch,
  // out-of-plane, van der Waals, electrostatic).
  enum class TermGroup { all, angle_dependent, angle_independent };
  // Open Babel's energy of those terms and (when gradient is not null) their gradient with
  // the out-of-plane correction, with no linear limit.
  double ordinary_evaluation(const Eigen::VectorXd& x, Eigen::VectorXd* gradient, TermGroup group) const;
  double evaluate(const Eigen::VectorXd& x, Eigen::VectorXd* gradient) const;

  std::string name_;
  std::size_t atom_count_ = 0;
  double kcal_mol_per_unit_ = 1.0;
  OpenBabelPotentialOptions options_;
  std::unique_ptr<OpenBabel::OBMol> mol_;
  std::unique_ptr<OpenBabel::OBForceField> field_;
  std::vector<int> out_of_plane_atoms_;
  std::unique_ptr<detail::OutOfPlaneModel> out_of_plane_model_;
  std::string out_of_plane_note_;
  double out_of_plane_fit_residual_ = 0.0;
  detail::LinearLimit linear_limit_;
  std::vector<std::string> setup_warnings_;
  // Atoms (1-based text, e.g. "C1–C2–N3") of exactly linear triples where a cusp was met.
  mutable std::set<std::string> cusp_angles_;
  bool replaces_torsions_ = false;
  std::vector<detail::UffTorsion> uff_torsions_;
};

// The force-field names Open Babel provides that this project supports, as spelled
// for users: "MMFF94", "MMFF94s", "UFF", "GAFF", "Ghemical".
const std::vector<std::string>& supported_openbabel_force_fields();
// Case-insensitive match against the list above; empty string when there is none.
std::string canonical_openbabel_force_field(const std::string& name);

}  // namespace overtone
