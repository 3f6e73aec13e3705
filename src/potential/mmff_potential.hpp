#pragma once
// MMFF94 and MMFF94s (Halgren, J. Comput. Chem. 17, 490–641 (1996), parts I–V; MMFF94s:
// Halgren, J. Comput. Chem. 20, 720 (1999)) compiled into the program: our own energy,
// analytic gradient, analytic Hessian and Hessian–vector product of every term.
//
// What comes from Open Babel: the MMFF94 atom types, formal and partial charges,
// aromaticity and ring perception (its force field is set up once, at construction, and
// its typed copy of the molecule is read), the installed parameter files (read by our own
// parser, detail_mmff_parameters.hpp) and the choice of parameters, reproduced rule for
// rule (detail_mmff_terms.hpp lists where Open Babel's rules depart from the papers).
// So the force field is Open Babel's MMFF94; the evaluation is ours.
//
// Where this implementation and Open Babel 3.1.1 give different numbers on purpose:
//   - a bend about a linear centre (lin = 1: sp carbon, =N=, isonitrile N) at exactly
//     180°: Open Babel's angle routine returns 0° for a collinear triple, so its energy
//     jumps to 2 · 143.9325 ka (≈200 kcal/mol for acetonitrile) and its derivatives are not
//     finite; here E = 143.9325 ka (1 + cos θ) is evaluated as published, smooth through
//     180°;
//   - any bend at exactly 0° or 180° and Wilson angles whose plane collapses, for the
//     same reason (see detail_mmff_kernels.hpp for the values used there).
// Everywhere else the term energies agree with Open Babel's E_Bond, E_Angle, E_StrBnd,
// E_Torsion, E_OOP, E_VDW and E_Electrostatic to rounding (tests/potential).
//
// Energies in kcal/mol, coordinates in Å (the Potential contract).
#include <memory>
#include <string>
#include <vector>

#include "potential/detail_mmff_parameters.hpp"
#include "potential/detail_mmff_terms.hpp"
#include "potential/potential.hpp"

namespace overtone {

struct MmffOptions {
  // Dielectric constant D of the buffered Coulomb term (the published force field and
  // Open Babel use D = 1).
  double dielectric_constant = 1.0;
  // Coulomb energy ∝ 1/(D (r + δ)²) instead of 1/(D (r + δ)) (Halgren I, eq. 8 with n = 2;
  // an option of the force field, off in its published default and in Open Babel).
  bool distance_dependent_dielectric = false;
};

// The energy of each term kind at one geometry, kcal/mol.
struct MmffTermEnergies {
  double bond_stretch = 0.0;
  double angle_bend = 0.0;
  double stretch_bend = 0.0;
  double torsion = 0.0;
  double out_of_plane = 0.0;
  double van_der_waals = 0.0;
  double electrostatic = 0.0;
  double total() const {
    return bond_stretch + angle_bend + stretch_bend + torsion + out_of_plane + van_der_waals + electrostatic;
  }
};

class MmffPotential final : public Potential {
 public:
  // variant_name: "MMFF94" or "MMFF94s" (case-insensitive). Throws Error for another name,
  // a molecule Open Babel cannot type, an atom type that does not fit its atom, or a
  // missing parameter (naming the atoms, their MMFF types and the term).
  MmffPotential(const std::string& variant_name, const Molecule& molecule, const MmffOptions& options = {});

  std::string description() const override;
  std::size_t atom_count() const override { return terms_.atom_types.size(); }
  bool has_analytic_hessian() const override { return true; }
  bool has_analytic_hessian_vector_product() const override { return true; }
  // The evaluation reads only the terms assigned at construction.
  bool supports_concurrent_evaluation() const override { return true; }
  // Where the molecule lies outside what MMFF94 was parameterized for (radicals, ions).
  std::vector<std::string> warnings() const override { return applicability_warnings_; }

  // "MMFF94" or "MMFF94s".
  std::string variant_name() const;
  const std::vector<int>& atom_types() const { return terms_.atom_types; }
  const std::vector<double>& partial_charges() const { return terms_.partial_charges; }
  const detail::MmffTerms& terms() const { return terms_; }
  MmffTermEnergies term_energies(const Eigen::VectorXd& x) const;

 protected:
  double compute_energy(const Eigen::VectorXd& x) const override;
  double compute_energy_and_gradient(const Eigen::VectorXd& x, Eigen::VectorXd& gradient) const override;
  Eigen::MatrixXd compute_hessian(const Eigen::VectorXd& x) const override;
  Eigen::VectorXd compute_hessian_vector_product(const Eigen::VectorXd& x,
                                                 const Eigen::VectorXd& direction) const override;

 private:
  template <bool Gradient>
  double evaluate(const Eigen::VectorXd& x, double* gradient, MmffTermEnergies* energies) const;

  detail::MmffVariant variant_;
  MmffOptions options_;
  detail::MmffTerms terms_;
  std::vector<std::string> applicability_warnings_;
};

// Case-insensitive match of "MMFF94" / "MMFF94s"; empty string when there is none.
std::string canonical_mmff_variant(const std::string& name);

}  // namespace overtone
