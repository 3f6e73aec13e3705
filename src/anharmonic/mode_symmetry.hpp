#pragma once
// How the point group acts on the normal coordinates, in the form the anharmonic stage
// needs: one orthogonal matrix R(g) per group operation on the vibrational normal
// coordinates, the degenerate sets they define, and (optionally) the character table so
// that overtone and combination levels get species and IR/Raman activity.
//
// Identity maintained by ModeSymmetry: for every operation g and every normal-coordinate
// vector Q, V(x_eq + M^{-1/2} L R(g) Q) = V(x_eq + M^{-1/2} L Q); R(g) is orthogonal and
// block-diagonal over degenerate_set (it never mixes modes of different sets). Because
// the modes of one set share ω, R(g) acts the same way on dimensionless q.
//
// Without a point group (or before one is known) trivial_mode_symmetry() gives the
// identity alone, with degenerate sets found from the frequencies; every anharmonic
// computation works on it, it simply skips nothing.
#include <Eigen/Dense>
#include <string>
#include <vector>

#include "harmonic/harmonic.hpp"
#include "symmetry/detect_point_group.hpp"
#include "symmetry/mode_symmetry.hpp"

namespace overtone {

// A point-group operation on Cartesian positions: x_{π(a)} − c = matrix · (x_a − c) for
// every atom a, with c the centre of mass and π = atom_permutation (0-based).
struct CartesianSymmetryOperation {
  std::string name;                                      // e.g. "C2", "σv(xz)"; informational
  Eigen::Matrix3d matrix = Eigen::Matrix3d::Identity();  // orthogonal
  std::vector<int> atom_permutation;                     // atom a is carried onto atom atom_permutation[a]
};

// One irreducible representation (or a real pair of complex-conjugate ones) with its
// character under each operation of ModeSymmetry::operations, in the same order.
struct SpeciesCharacters {
  std::string label;               // Mulliken label, e.g. "A1", "B2", "E'", "Pi_u"
  std::vector<double> characters;  // one per operation
  bool ir_active = false;          // carries x, y or z
  bool raman_active = false;       // carries a quadratic function
};

struct ModeSymmetry {
  std::string point_group;  // e.g. "C2v"; empty when unknown
  std::vector<std::string> operation_names;
  std::vector<Eigen::MatrixXd> operations;  // R(g), M × M, identity first
  std::vector<SpeciesCharacters> irreps;    // may be empty: then no species are assigned
  std::vector<int> degenerate_set;          // per mode: set id 0, 1, …, in order of first mode
  std::vector<std::string> species;         // per mode; "" when unknown
  // Largest entry of R(g)ᵀR(g) − I or of R(g) outside the set blocks, over all g: how far
  // the harmonic modes are from carrying the group exactly (dimensionless).
  double representation_error = 0.0;

  std::size_t mode_count() const { return degenerate_set.size(); }
  std::size_t order() const { return operations.size(); }
  int set_count() const;
  // Modes of each set, ascending.
  std::vector<std::vector<int>> sets() const;
  bool has_group() const { return operations.size() > 1; }
  bool has_character_table() const { return !irreps.empty(); }
};

// The identity alone; modes whose harmonic wavenumbers differ by at most
// degeneracy_tolerance_cm1 (cm⁻¹) form one degenerate set (consecutive in the ascending
// order). Throws Error for a negative tolerance.
ModeSymmetry trivial_mode_symmetry(const HarmonicResult& harmonic, double degeneracy_tolerance_cm1 = 0.1);

// R(g) = Lᵀ P(g) L with P(g) the operation on mass-weighted Cartesian displacements.
// Degenerate sets are the blocks the R(g) connect (entries above block_tolerance) and
// species come from the characters when irreps are given (each set must match one
// irrep; otherwise its species stays empty). Throws Error when an operation's
// permutation has the wrong length or is not a permutation, a matrix is not orthogonal,
// the identity is missing, or an irreps entry has the wrong number of characters.
ModeSymmetry mode_symmetry_from_operations(const HarmonicResult& harmonic,
                                           const std::vector<CartesianSymmetryOperation>& operations,
                                           const std::vector<SpeciesCharacters>& irreps = {},
                                           double block_tolerance = 1e-3);

// The harmonic result with the modes of every degenerate set replaced by the symmetry
// stage's symmetry-adapted partners (ModeSet::adapted_modes), and the group's action on
// those modes with the character table (labels in ASCII, e.g. "A1", "Pi_u"). Mode order
// and frequencies are unchanged; per-mode quantities of replaced modes (Cartesian
// displacements, reduced masses, force constants) are recomputed. The harmonic geometry
// must be the symmetrized one the species were assigned at (representation_error tells
// how exact the group is on the modes). Throws Error when the sizes disagree.
struct SymmetryAdaptedHarmonic {
  HarmonicResult harmonic;
  ModeSymmetry symmetry;
};
SymmetryAdaptedHarmonic adapt_to_point_group(const HarmonicResult& harmonic, const PointGroupResult& group,
                                             const ModeSymmetryResult& species);

namespace detail {

// Character of operation g on the space spanned by the given orthonormal columns of a
// representation D (D(g) square, basis columns in its space): trace(Bᵀ D(g) B).
double subspace_character(const Eigen::MatrixXd& representation, const Eigen::MatrixXd& basis);

// Multiplicity of each irrep in a representation with the given characters (one per
// operation): (1/|G|) Σ_g χ(g) χ_Γ(g). Rounded to the nearest integer when within 1e-3.
std::vector<double> irrep_multiplicities(const ModeSymmetry& symmetry, const std::vector<double>& characters);

// "A1", "A1 + E", "2A1 + B2" from the characters; "" without a character table or when the
// decomposition is not integral.
std::string species_label(const ModeSymmetry& symmetry, const std::vector<double>& characters);

// Multiplicity of the totally symmetric irrep in the representation with these
// characters: (1/|G|) Σ_g χ(g).
double invariant_multiplicity(const std::vector<double>& characters);

}  // namespace detail

}  // namespace overtone
