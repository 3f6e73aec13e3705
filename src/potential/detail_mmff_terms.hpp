#pragma once
// The interaction list of one molecule under MMFF94 / MMFF94s: every term with its
// atoms (0-based) and parameters in the units of the published functional forms
// (Halgren, J. Comput. Chem. 17, 490 (1996), part I, eqs. 2–8). Not part of the
// promised API (namespace detail).
//
// assign_mmff_terms builds the list from a molecule that Open Babel has typed (its MMFF94
// atom types, formal and partial charges, aromaticity and rings, i.e. the force field's
// own copy of the molecule after OBForceField::Setup) and our reading of the parameter
// files, choosing every parameter the way Open Babel 3.1.1 does, including its
// step-down order and empirical rules. Where Open Babel departs from the published
// rules the departure is kept, so that both implementations give one force field:
//   - angle step-down tries exact, 3-2-3, 4-2-4, 5-2-5 (Halgren I lists 2-2-2 as well;
//     level 2 equals level 1 for every type in mmffdef.par, so nothing is lost);
//   - a torsion without parameters around a non-aromatic bond always takes rule (c) of
//     Halgren V (p. 631): V2 = 6 π_bc (U_b U_c)^½ with π_bc = 1 when both centres have
//     mltb = 2 and the bond from the first to the second atom is double, else 0.4; the
//     later rules (d)–(h) are never reached;
//   - the empirical bond length (Halgren V, p. 625) looks up mltb of the comparison
//     "type == 3" instead of the type, so an sp centre (mltb = 3) counts as sp3 and its
//     single bonds are not shortened by 0.08 Å.
#include <string>
#include <vector>

#include "potential/detail_mmff_parameters.hpp"

namespace OpenBabel {
class OBMol;
}

namespace overtone::detail {

// E = 143.9325/2 kb Δr² (1 + cs Δr + 7/12 cs² Δr²), cs = −2 Å⁻¹.
struct MmffBondTerm {
  int a = 0, b = 0;
  double force_constant = 0.0;  // kb, md/Å
  double length = 0.0;          // r0, Å
};

// Bend a–centre–c. Non-linear centres: E = 0.043844/2 ka Δθ² (1 + cb Δθ), Δθ in degrees,
// cb = −0.007 deg⁻¹; linear centres (lin = 1): E = 143.9325 ka (1 + cos θ).
// Stretch–bend (non-linear centres only): E = 2.51210 (kba_abc Δr_a + kba_cba Δr_c) Δθ.
struct MmffAngleTerm {
  int a = 0, centre = 0, c = 0;
  double force_constant = 0.0;  // ka, md Å/rad²
  double angle_deg = 0.0;       // θ0
  bool linear = false;
  bool stretch_bend = false;
  double stretch_bend_a = 0.0;  // kba for the a–centre bond, md/rad
  double stretch_bend_c = 0.0;  // kba for the c–centre bond, md/rad
  double length_a = 0.0;        // r0 of a–centre, Å
  double length_c = 0.0;        // r0 of c–centre, Å
};

// E = ½ (V1 (1 + cos φ) + V2 (1 − cos 2φ) + V3 (1 + cos 3φ)), φ the dihedral a–b–c–d.
struct MmffTorsionTerm {
  int a = 0, b = 0, c = 0, d = 0;
  double v1 = 0.0, v2 = 0.0, v3 = 0.0;  // kcal/mol
};

// E = 0.043844/2 koop χ², χ (degrees) the Wilson angle of the bond centre→d against
// the plane a–centre–c.
struct MmffOutOfPlaneTerm {
  int a = 0, centre = 0, c = 0, d = 0;
  double force_constant = 0.0;  // koop, md Å/rad²
};

// Atoms separated by three or more bonds. Buffered 14-7 (Halgren II):
// E = ε (1.07 R*/(r + 0.07 R*))⁷ (1.12 R*⁷/(r⁷ + 0.12 R*⁷) − 2); buffered Coulomb:
// E = charge_product / (r + 0.05)^n, n = 1 (constant dielectric) or 2 (distance-dependent).
struct MmffPairTerm {
  int a = 0, b = 0;
  double vdw_radius = 0.0;   // R*_ab, Å
  double vdw_radius7 = 0.0;  // R*_ab⁷, Å⁷ (kept: a power per evaluation costs more than the rest)
  double vdw_epsilon = 0.0;  // ε_ab, kcal/mol
  // 332.0716 q_a q_b / D, times 0.75 for 1-4 pairs; kcal Å^n/mol.
  double charge_product = 0.0;
};

struct MmffTerms {
  std::vector<int> atom_types;          // MMFF numeric type per atom
  std::vector<double> partial_charges;  // e, per atom
  std::vector<MmffBondTerm> bonds;
  std::vector<MmffAngleTerm> angles;
  std::vector<MmffTorsionTerm> torsions;
  std::vector<MmffOutOfPlaneTerm> out_of_plane;
  std::vector<MmffPairTerm> pairs;
  // Terms whose parameters came from an empirical rule rather than a table line, one
  // line each ("bond 3-5: empirical rule"), for diagnostics.
  std::vector<std::string> empirical_notes;
};

struct MmffAssignmentOptions {
  // Dielectric constant D of the Coulomb term (1 in the published force field).
  double dielectric_constant = 1.0;

  void validate() const;  // throws Error naming the field that is out of range
};

// typed: Open Babel's MMFF94 copy of the molecule after a successful Setup (atom types
// as strings, partial charges, MMFF aromaticity). Throws Error naming the atoms, their
// MMFF types and the term when an atom type is unusable or a parameter is missing.
MmffTerms assign_mmff_terms(OpenBabel::OBMol& typed, const MmffParameters& parameters,
                            const MmffAssignmentOptions& options = {});

// Checks the atom types Open Babel assigned: every type must be listed in mmffprop.par
// with the atom's element and number of bonded neighbours (Open Babel falls back to an
// unrelated type, or type 0, when none of its rules matches). Throws Error naming the
// first atom that fails.
void check_mmff_atom_types(OpenBabel::OBMol& typed, const MmffParameters& parameters);

}  // namespace overtone::detail
