#pragma once
// Open Babel's general force fields (MMFF94, MMFF94s, UFF, GAFF, Ghemical) behind the
// Potential interface.
//
// Gradients: Open Babel returns forces (−dE/dx) in the force field's own energy unit
// (kcal/mol for MMFF94/MMFF94s, kJ/mol for UFF, GAFF and Ghemical); both sign and unit
// are converted here. Its analytic gradient of the out-of-plane term disagrees with the
// energy for MMFF94 and UFF (measured: errors of order 10% of that term's gradient at
// trigonal centres), which would make a tight optimization and a finite-difference
// Hessian inconsistent with the energy. That term's gradient is therefore replaced by
// central differences of the out-of-plane energy alone, over the atoms that take part
// in out-of-plane terms; every other term keeps its analytic gradient.
#include <memory>
#include <string>
#include <vector>

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
};

class OpenBabelPotential final : public Potential {
 public:
  // Throws Error if the name is not one of the supported force fields or the force
  // field cannot assign parameters to the molecule.
  OpenBabelPotential(const std::string& force_field_name, const Molecule& molecule,
                     const OpenBabelPotentialOptions& options = {});
  ~OpenBabelPotential() override;

  std::string description() const override;
  std::size_t atom_count() const override { return atom_count_; }
  const std::string& force_field_name() const { return name_; }
  // Number of atoms whose out-of-plane gradient is taken by differences.
  std::size_t out_of_plane_atom_count() const { return out_of_plane_atoms_.size(); }

  // The force field's own analytic gradient without the out-of-plane correction,
  // kcal/mol/Å (for tests that check Open Babel against its energy).
  Eigen::VectorXd raw_openbabel_gradient(const Eigen::VectorXd& x) const;

 protected:
  double compute_energy(const Eigen::VectorXd& x) const override;
  double compute_energy_and_gradient(const Eigen::VectorXd& x, Eigen::VectorXd& gradient) const override;

 private:
  void load_coordinates(const Eigen::VectorXd& x) const;
  double out_of_plane_energy(const Eigen::VectorXd& x) const;

  std::string name_;
  std::size_t atom_count_ = 0;
  double kcal_mol_per_unit_ = 1.0;
  OpenBabelPotentialOptions options_;
  std::unique_ptr<OpenBabel::OBMol> mol_;
  std::unique_ptr<OpenBabel::OBForceField> field_;
  std::vector<int> out_of_plane_atoms_;
};

// The force-field names Open Babel provides that this project supports, as spelled
// for users: "MMFF94", "MMFF94s", "UFF", "GAFF", "Ghemical".
const std::vector<std::string>& supported_openbabel_force_fields();
// Case-insensitive match against the list above; empty string when there is none.
std::string canonical_openbabel_force_field(const std::string& name);

}  // namespace overtone
