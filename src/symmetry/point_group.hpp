#pragma once
// Molecular point groups in the symmetry frame: the exact operations (3×3 orthogonal
// matrices) with their trade names, the classes, and the character table with Mulliken
// labels, the Cartesian functions each species carries and the IR/Raman activity that
// follows from them.
//
// Where the tables come from: nothing is typed. The operations are generated from a
// few generators per family (closed-form rotation and reflection matrices); the
// irreducible characters are computed from the class algebra of that group (Burnside's
// method: common eigenvectors of the class-multiplication matrices) and then labelled
// by Mulliken's rules (J. Chem. Phys. 23, 1997 (1955)) from the characters of named
// operations (principal axis, C2', σv, σh, i). Complex-conjugate pairs of
// one-dimensional irreps are merged into one real two-dimensional species E (flagged
// complex_pair). IR activity (species carrying x, y or z) and Raman activity (species
// carrying a quadratic function) are derived by projecting those functions onto each
// species, never typed per group. Tests check orthogonality and spot values against
// F. A. Cotton, Chemical Applications of Group Theory, 3rd ed. (1990), Appendix IIA.
//
// Symmetry frame (see docs/symmetry.md): principal axis along z; x along a C2'
// axis (Dn, Dnh, Dnd) or in a σv plane (Cnv); T, Td, Th, O, Oh with x, y, z along the
// twofold (fourfold for O, Oh; S4 for Td) axes; I, Ih with x, y, z along three
// perpendicular twofold axes and a fivefold axis along (0, 1, φ).
//
// Linear molecules (C∞v, D∞h) are represented by the finite subgroup C_mv or D_mh
// (m = linear_axis_order, default 8) whose irreps are relabelled Σ⁺, Σ⁻, Π, Δ, Φ, with
// g/u; the order-m axis is rich enough to show rotating motions of degenerate bends.
#include <Eigen/Dense>
#include <complex>
#include <string>
#include <vector>

#include "symmetry/finite_group.hpp"

namespace overtone {

enum class PointGroupFamily {
  C1,
  Cs,
  Ci,
  Cn,
  Cnv,
  Cnh,
  Dn,
  Dnh,
  Dnd,
  S2n,
  T,
  Td,
  Th,
  O,
  Oh,
  I,
  Ih,
  Cinfv,
  Dinfh
};

struct SymmetryOperation {
  std::string name;        // typographic, e.g. "C₃²", "σv", "S₄³", "C₂′", "i"
  std::string ascii_name;  // e.g. "C3^2", "sigma_v", "S4^3", "C2'", "i"
  Eigen::Matrix3d matrix = Eigen::Matrix3d::Identity();  // acts on column vectors, symmetry frame
  bool proper = true;                                    // det = +1
  // Axis of the rotation part: for proper R the rotation axis, for improper R the axis
  // of −R (the normal of a mirror plane, the axis of an S_n); zero for E and i.
  Eigen::Vector3d axis = Eigen::Vector3d::Zero();
  int class_index = 0;
};

struct Irrep {
  std::string label;          // ASCII Mulliken label: "A1g", "B2", "E'", "E1''", "T2u", "Sigma_g+", "Pi_u"
  std::string display_label;  // typographic: "A₁g", "B₂", "E′", "E₁″", "T₂u", "Σg⁺", "Πu"
  // For linear groups: the label of the finite stand-in group (e.g. "E1u" for "Pi_u");
  // otherwise equal to label.
  std::string finite_label;
  int dimension = 1;                             // real dimension (2 for a merged complex pair)
  bool complex_pair = false;                     // a real E made of two complex-conjugate 1-D irreps
  std::vector<double> characters;                // real characters per class
  std::vector<std::string> linear_functions;     // subset of "x", "y", "z"
  std::vector<std::string> rotations;            // subset of "Rx", "Ry", "Rz"
  std::vector<std::string> quadratic_functions;  // typographic, e.g. "x²+y²", "z²", "xy"
  bool ir_active = false;                        // carries x, y or z
  bool raman_active = false;                     // carries a quadratic function
};

struct CharacterTable {
  std::vector<std::string> class_labels;        // typographic, e.g. "2C₃", "3σv"
  std::vector<std::string> ascii_class_labels;  // e.g. "2C3", "3sigma_v"
  std::vector<int> class_sizes;
  std::vector<Irrep> irreps;  // textbook order: g before u, ′ before ″, then A, B, E, T, G, H, then subscript
  // The complex irreducible characters (rows per class) the real table was built from;
  // complex_rows[k] lists the rows that make irreps[k] (one, or a conjugate pair).
  std::vector<std::vector<std::complex<double>>> complex_characters;
  std::vector<std::vector<int>> complex_rows;
};

struct PointGroup {
  std::string name;          // ASCII: "C2v", "D6h", "Td", "S8", "Dinfh", "Cinfv"
  std::string display_name;  // typographic: "C₂v", "D₆h", "Td", "S₈", "D∞h", "C∞v"
  PointGroupFamily family = PointGroupFamily::C1;
  int axis_order = 1;  // n of Cn, Cnv, Dnh, ...; 2n of S2n; m of the stand-in for linear groups
  bool linear = false;
  std::string finite_name;  // name of the finite group the operations form (e.g. "D8h" for "Dinfh")
  std::vector<SymmetryOperation> operations;  // operations[0] is E
  std::vector<std::vector<int>> classes;      // operation indices; classes[0] = {0}
  CharacterTable character_table;

  int order() const { return static_cast<int>(operations.size()); }
  // The abstract group with element k = operations[k] (same order and names).
  FiniteGroup finite_group() const;
  // Index of the irrep with this ASCII or typographic label; -1 if absent.
  int irrep_index(const std::string& label) const;
};

// Builds the group in the symmetry frame. axis_order is n for Cn, Cnv, Cnh, Dn, Dnh,
// Dnd (n ≥ 2), the subscript 2n of S2n (even, ≥ 4), ignored for the others;
// linear_axis_order is the m of C_mv/D_mh standing in for C∞v/D∞h (m ≥ 3).
// Throws Error for an order out of range.
PointGroup make_point_group(PointGroupFamily family, int axis_order = 1, int linear_axis_order = 8);

// Same from an ASCII name: "C1", "Cs", "Ci", "C3", "C2v", "C3h", "D2", "D6h", "D4d", "S8",
// "T", "Td", "Th", "O", "Oh", "I", "Ih", "Cinfv", "Dinfh". Throws Error for an unknown name.
PointGroup make_point_group(const std::string& name, int linear_axis_order = 8);

// Multiplicity of each irrep in a real representation with the given character per
// operation (size = group order): n_Γ = ⟨χ, χ_Γ⟩ / ⟨χ_Γ, χ_Γ⟩. Not rounded.
std::vector<double> reduce_representation(const PointGroup& group, const std::vector<double>& characters);

// "2A1 + B2" (ASCII labels) or "2A₁ + B₂" (typographic) from integer multiplicities.
std::string format_decomposition(const PointGroup& group, const std::vector<int>& multiplicities,
                                 bool typographic);

}  // namespace overtone
