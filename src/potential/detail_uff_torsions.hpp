#pragma once
// UFF's torsion term, evaluated by this program with Open Babel's atom types and
// parameter file. Not part of the promised API (namespace detail); used by
// OpenBabelPotential in place of Open Babel's own UFF torsion energy.
//
// Why: Open Babel 3.1's UFF set-up assigns barrier, periodicity and phase to a torsion
// only when both central atoms are sp3, both sp2, or one of each; for any other central
// bond (an sp atom as in C–C≡N and C–C≡C, a metal, …) it keeps the values left over from
// the previous torsion, or reads an uninitialized barrier for the first one (measured:
// 1e216 kJ/mol for but-2-yne, different from run to run). UFF gives such torsions no
// barrier (Rappé et al., J. Am. Chem. Soc. 114, 10024 (1992): torsion terms only for the
// sp3/sp2 combinations), and so does this evaluation.
//
// For the three defined cases the form and the numbers are Open Babel's (which follow
// the paper): E = V (1 − cos(n φ₀) cos(n φ)) with
//   sp3–sp3: n = 3, φ₀ = 60°, V = ½ √(V_i V_j) (V from the parameter file's Vi column;
//            an oxygen-group atom gives n = 2, φ₀ = 90° and V_i = 2 (O) or 6.8 (S, Se, Te, Po));
//   sp2–sp2: n = 2, φ₀ = 180°, V = ½ · 5 √(U_i U_j) (1 + 4.18 ln b), b the central bond
//            order (1.5 aromatic, 1.41 amide);
//   sp2–sp3: n = 6, φ₀ = 0°, V = ½ (an oxygen-group sp3 atom gives n = 2, φ₀ = 90°);
// in kcal/mol, converted to kJ/mol with Open Babel's factor as its UFF does. Torsions
// whose barrier is below Open Babel's zero threshold (2e-6) are left out, as there.
#include <Eigen/Dense>
#include <array>
#include <vector>

namespace OpenBabel {
class OBMol;
}  // namespace OpenBabel

namespace overtone::detail {

struct UffTorsion {
  std::array<int, 4> atoms{};  // 0-based, a–b–c–d with b–c the central bond
  double barrier = 0.0;        // V in the force field's unit (kJ/mol)
  int periodicity = 0;         // n
  double cos_n_phase = 0.0;    // cos(n φ₀)
};

// The torsion terms of a molecule whose atoms carry UFF types (Open Babel's
// "FFAtomType" data, as set by OBForceField::GetAtomTypes). Throws Error when a type is
// missing from UFF.prm.
std::vector<UffTorsion> uff_torsions(OpenBabel::OBMol& mol);

// Sum of the terms at x (Å), in kJ/mol; adds dE/dx (kJ/mol/Å) to gradient when it is not
// null. A torsion whose dihedral is undefined (three collinear atoms) contributes its
// energy at φ = 0 and no gradient; OpenBabelPotential never evaluates one there (its
// linear limit steps off such geometries first).
double uff_torsion_energy(const std::vector<UffTorsion>& torsions, const Eigen::VectorXd& x,
                          Eigen::VectorXd* gradient);

}  // namespace overtone::detail
