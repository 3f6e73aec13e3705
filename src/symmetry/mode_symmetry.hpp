#pragma once
// The symmetry of the normal modes, in one place.
//
// ModeSymmetry is the model every later stage uses (anharmonic, families, pipeline): the
// degenerate sets of the modes, the orthogonal matrices R(g) by which each operation acts
// on the normal coordinates, the species of every set with the character table, and what
// follows from the characters: multiplicities, symmetric and antisymmetric squares,
// symmetric powers, the number of invariants of a product of sets and, from that, the
// symmetry rules of resonances. It is built once per coordinate basis, by mode_symmetry()
// from the species assignment of the symmetry stage, or by ModeSymmetry::without_group()
// from the frequencies alone.
//
// The symmetry stage's own work is here too: assign_mode_species finds the degenerate sets
// once (candidates by frequency within degeneracy_tolerance_cm1, confirmed and split by
// projection onto the species) and rotates each set into symmetry-adapted partners; the
// geometry's side gives the characters of the vibrational representation, the action of an
// operation on 3N vectors and the group average of a Cartesian Hessian.
//
// Action of an operation on a 3N vector v (Cartesian or mass-weighted Cartesian; the
// two agree because permuted atoms have equal masses): (D(g)·v)_{π_g(i)} = R_g·v_i,
// with π_g = PointGroupResult::permutations[g] and R_g the operation matrix in the
// frame of v. On normal coordinates L (3N × M, orthonormal columns): R(g) = Lᵀ·D(g)·L.
#include <Eigen/Dense>
#include <array>
#include <string>
#include <vector>

#include "harmonic/harmonic.hpp"
#include "symmetry/detect_point_group.hpp"

namespace overtone {

// ---- Tolerances of the mode symmetry -----------------------------------------------

// Harmonic wavenumbers (cm⁻¹) that differ by at most this, chained in ascending order,
// are one candidate degenerate set. A Hessian averaged over the group makes degenerate
// wavenumbers equal to ~1e-8 cm⁻¹; central differences of gradients without that average
// split them by up to ~0.1 cm⁻¹ (Open Babel force fields); 0.5 keeps a factor five above
// that noise and stays far below the spacing of distinct fundamentals. With a point group,
// distinct species closer than this are separated again by projection; without one, such a
// pair stays one set (its coupling is then treated like that of degenerate partners).
inline constexpr double degeneracy_tolerance_cm1 = 0.5;

// A multiplicity n = ⟨χ, χ_Γ⟩ / ⟨χ_Γ, χ_Γ⟩ is a group average of characters, so by the
// Cauchy–Schwarz inequality an error δ in every character moves it by at most about δ
// (times the dimension of the product for characters of squares). Characters from exact
// operations err by ~1e-12, those of normal-coordinate matrices by the representation
// error: ~1e-10 with a symmetrized Hessian, ~1e-5 without. 1e-3 lies a hundred times above
// the largest of these and far below ½, so that a value within it of an integer is that
// integer and anything else means the characters are not those of a representation.
inline constexpr double multiplicity_tolerance = 1e-3;

// A multiplicity computed in floating point: its nearest integer, and whether the value is
// that integer within multiplicity_tolerance: the one integer test of multiplicities and
// fixed-space dimensions.
struct Multiplicity {
  int count = 0;
  bool integral = true;
};
Multiplicity as_multiplicity(double value);

// Modes in chains of wavenumbers that differ by at most tolerance_cm1 from their neighbour
// in ascending order: the candidate degenerate sets. Each chain lists its modes by
// ascending wavenumber (ties by index); chains are in ascending wavenumber.
std::vector<std::vector<int>> frequency_chains(const Eigen::VectorXd& frequencies_cm1,
                                               double tolerance_cm1 = degeneracy_tolerance_cm1);

// ---- The model ------------------------------------------------------------------------

// One irreducible representation (or a real pair of complex-conjugate ones) with its
// character under each operation of a ModeSymmetry, in the same order.
struct SpeciesCharacters {
  std::string label;               // ASCII Mulliken label, e.g. "A1", "B2", "E'", "Pi_u"
  std::vector<double> characters;  // one per operation
  bool ir_active = false;          // carries x, y or z
  bool raman_active = false;       // carries a quadratic function
};

// How a finite group acts on M normal coordinates.
//
// Identity maintained: R(g) is M × M and orthogonal to representation_error(), the first
// operation is the identity, and R(g) is block-diagonal over the sets to
// representation_error() (it never mixes modes of different sets beyond that). For a
// molecule, V(x_eq + M^{-1/2} L R(g) Q) = V(x_eq + M^{-1/2} L Q) for every Q; because the
// modes of one set share ω, R(g) acts the same way on dimensionless coordinates q. Sets
// are numbered in order of their first (lowest) mode; each lists its modes ascending.
class ModeSymmetry {
 public:
  ModeSymmetry() = default;
  // operations: R(g) with the identity first; sets: a partition of the modes 0..M−1;
  // irreps: characters per operation (may be empty: no species); set_species: one ASCII
  // label per set ("" unknown; may be empty). Throws Error when a matrix has the wrong
  // size, the first one is not the identity, the sets do not partition the modes, or the
  // names, irreps or species have the wrong length.
  ModeSymmetry(std::vector<Eigen::MatrixXd> operations, std::vector<std::string> operation_names,
               std::vector<std::vector<int>> sets, std::vector<SpeciesCharacters> irreps = {},
               std::vector<std::string> set_species = {}, std::string point_group = {});
  // The identity alone; modes whose wavenumbers differ by at most tolerance_cm1 (chained in
  // ascending order) form one set. Throws Error for a negative tolerance.
  static ModeSymmetry without_group(const Eigen::VectorXd& frequencies_cm1,
                                    double tolerance_cm1 = degeneracy_tolerance_cm1);

  const std::string& point_group() const { return point_group_; }  // ASCII; empty when unknown
  const std::vector<std::string>& operation_names() const { return operation_names_; }
  const std::vector<Eigen::MatrixXd>& operations() const { return operations_; }
  const std::vector<SpeciesCharacters>& irreps() const { return irreps_; }
  const std::vector<std::vector<int>>& sets() const { return sets_; }
  const std::vector<int>& degenerate_set() const { return set_of_mode_; }  // set id per mode
  const std::vector<std::string>& species() const { return species_; }     // per mode; "" unknown
  const std::string& set_species(int set) const { return set_species_[static_cast<std::size_t>(set)]; }
  // Largest entry of R(g)ᵀR(g) − I or of R(g) outside the set blocks, over all g: how far
  // the modes are from carrying the group exactly (dimensionless).
  double representation_error() const { return representation_error_; }

  std::size_t mode_count() const { return set_of_mode_.size(); }
  std::size_t order() const { return operations_.size(); }
  int set_count() const { return static_cast<int>(sets_.size()); }
  bool has_group() const { return operations_.size() > 1; }
  bool has_character_table() const { return !irreps_.empty(); }

  // R(g) with the entries between different sets set to zero: exactly block-diagonal, for
  // acting on spaces built from whole sets (oscillator states, reused displacements).
  std::vector<Eigen::MatrixXd> block_operations() const;

  // Character of the symmetric power Sym^n (1 ≤ n ≤ 4) of a set under an operation, from
  // the power sums p_k = tr(B^k) of the set's block B of R(g) (cycle index of the symmetric
  // group); n = 1 is the set's own character.
  double symmetric_power_character(int set, int power, std::size_t operation) const;
  // One value per operation: χ_Γ(g), ½(χ(g)² + χ(g²)) and ½(χ(g)² − χ(g²)).
  std::vector<double> set_characters(int set) const;
  std::vector<double> symmetric_square_characters(int set) const;
  std::vector<double> antisymmetric_square_characters(int set) const;

  // Multiplicity of each species (order of irreps()) in a representation with these
  // characters (one per operation): ⟨χ, χ_Γ⟩ / ⟨χ_Γ, χ_Γ⟩, so that a real pair of
  // complex-conjugate species counts once. Not rounded; empty without a character table.
  // Throws Error when the number of characters is not the group order.
  std::vector<double> multiplicities(const std::vector<double>& characters) const;
  // "A1", "A1 + E", "2A1 + B2"; "" without a character table or when a multiplicity is
  // not integral or negative.
  std::string species_label(const std::vector<double>& characters) const;

  // Number of independent invariants of ⊗_s Sym^{n_s}(set s), with n_s how often set s
  // occurs in the ascending list (at most 4 times): the multiplicity of the totally
  // symmetric species, i.e. how many independent force constants of that block symmetry
  // allows. Not rounded.
  double invariant_count(const int* sorted_sets, std::size_t count) const;
  template <std::size_t Rank>
  double invariant_count(const std::array<int, Rank>& sorted_sets) const {
    return invariant_count(sorted_sets.data(), Rank);
  }

  // Symmetry rules of resonances between sets (each allowed exactly when the coupling
  // force-constant block has an invariant):
  // 2ν_lower ↔ ν_upper: Γ_upper occurs in the symmetric square of Γ_lower (φ_{lower lower upper});
  bool overtone_couples(int lower, int upper) const;
  // ν_first + ν_second ↔ ν_upper: Γ_upper occurs in Γ_first ⊗ Γ_second (φ_{first second upper});
  bool combination_couples(int first, int second, int upper) const;
  // 2ν_first ↔ 2ν_second: Sym²Γ_first ⊗ Sym²Γ_second contains the totally symmetric species.
  bool overtones_couple(int first, int second) const;

 private:
  std::string point_group_;
  std::vector<std::string> operation_names_;
  std::vector<Eigen::MatrixXd> operations_;
  std::vector<SpeciesCharacters> irreps_;
  std::vector<std::vector<int>> sets_;
  std::vector<std::string> set_species_;
  std::vector<int> set_of_mode_;
  std::vector<std::string> species_;
  double representation_error_ = 0.0;
  std::vector<std::vector<std::array<double, 4>>> power_sums_;  // [set][operation]: p_1 … p_4
};

// R(g) = Lᵀ·D(g)·L for every operation, on the columns of modes (3N × M) in the frame given.
std::vector<Eigen::MatrixXd> normal_coordinate_operations(const PointGroupResult& group,
                                                          const Eigen::MatrixXd& modes,
                                                          CoordinateFrame frame);

// ---- Geometry side: the vibrational representation and operations on 3N vectors -----

// Characters of the vibrational representation, one per operation:
// χ_vib = χ_3N − χ_translations − χ_rotations, with χ_3N(g) = (atoms g leaves in place)·tr R_g,
// χ_translations = tr R_g, χ_rotations = det R_g·tr R_g (linear molecules: the two
// rotations about axes perpendicular to the molecular axis only).
std::vector<double> vibrational_characters(const PointGroupResult& group);

// Multiplicity of each species (index as in group.group.character_table.irreps) in the
// vibrational representation. Throws Error when a multiplicity is not an integer (the
// permutations do not describe the geometry; cannot happen for a detection result).
std::vector<int> vibrational_decomposition(const PointGroupResult& group);

// D(g)·v for a 3N vector or for each column of a 3N×k matrix, in the given frame.
Eigen::MatrixXd apply_operation(const PointGroupResult& group, int operation, const Eigen::MatrixXd& vectors,
                                CoordinateFrame frame = CoordinateFrame::File);

// Average of D(g)ᵀ·H·D(g) over the group: a Cartesian (or mass-weighted) Hessian with the
// exact symmetry of the group, so that degenerate frequencies come out exactly degenerate.
// Throws Error when the size is not 3N×3N.
Eigen::MatrixXd symmetrize_cartesian_hessian(const Eigen::MatrixXd& hessian, const PointGroupResult& group,
                                             CoordinateFrame frame = CoordinateFrame::File);

// ---- The species assignment (the symmetry stage's result on the modes) --------------

struct ModeSpeciesOptions {
  // Modes whose |frequency| differ by at most this (cm⁻¹, chained) are candidates for one
  // degenerate set; projection then decides (see degeneracy_tolerance_cm1).
  double degeneracy_tolerance_cm1 = overtone::degeneracy_tolerance_cm1;
  // A set whose projection onto its species falls below 1 − purity_tolerance
  // (dimensionless fraction of the set's span) is reported as impure.
  double purity_tolerance = 0.02;
  // Largest displacement (Å) an operation may leave between an atom of the harmonic
  // geometry and its image, when checking in which frame that geometry is given;
  // negative means 2·(the group's detection tolerance).
  double frame_check_tolerance_angstrom = -1.0;

  void validate() const;  // throws Error naming the field that is out of range
};

struct ModeSet {
  std::vector<int> modes;             // indices of harmonic modes (columns of L), ascending
  int irrep = -1;                     // index into group.character_table.irreps
  std::string species;                // ASCII label, e.g. "E", "T2", "Pi_u"
  std::string display_species;        // typographic label, e.g. "T₂", "Πu"
  double frequency_cm1 = 0.0;         // mean of the members (signed; negative = imaginary)
  double frequency_spread_cm1 = 0.0;  // largest minus smallest member frequency
  double purity = 1.0;                // fraction of the set's span lying in its species
  bool ir_active = false;
  bool raman_active = false;
  // Orthonormal basis of the set in mass-weighted Cartesian space (3N×d, harmonic frame),
  // rotated within the set into symmetry-adapted partners: each partner is an eigenvector
  // of the operations whose symmetry-frame matrices are diagonal (C2 about axes, σ through
  // coordinate planes, i), ordered like x, y, z where the species carries them; in axial
  // groups the principal rotation turns partner 1 towards partner 2; otherwise partners
  // follow the order of the original modes.
  Eigen::MatrixXd adapted_modes;
  // D(g) = Bᵀ·D(g)·B in that basis, one d×d real matrix per operation (group order): the
  // set's block of the ModeSymmetry on the adapted coordinates.
  std::vector<Eigen::MatrixXd> operation_matrices;
  double invariance_residual = 0.0;  // max over g of |D(g)ᵀD(g) − I| (0 for an invariant set)
};

struct ModeSpecies {
  int set = -1;  // index into ModeSymmetryResult::sets
  int irrep = -1;
  std::string species;          // ASCII
  std::string display_species;  // typographic
  bool ir_active = false;
  bool raman_active = false;
  double purity = 1.0;  // fraction of this mode vector lying in its set and species
};

enum class ModeSymmetryStatus {
  Assigned,   // every set pure and the counts equal the decomposition from the geometry
  Ambiguous,  // some set impure, split inconsistently, or counts differ (see warnings)
};

struct ModeSymmetryResult {
  ModeSymmetryStatus status = ModeSymmetryStatus::Assigned;
  std::string message;
  std::vector<std::string> warnings;
  CoordinateFrame frame = CoordinateFrame::File;  // frame in which the harmonic data were found
  std::vector<ModeSpecies> modes;                 // one per harmonic mode, same order
  std::vector<ModeSet> sets;                      // ascending frequency
  std::vector<int> expected_multiplicities;       // from the geometry (vibrational_decomposition)
  std::vector<int> assigned_multiplicities;       // counted from the sets
  std::string decomposition;                      // "2A1 + B2"
  std::string display_decomposition;              // "2A₁ + B₂"
};

// Throws Error when the atom count or masses differ from the detection, or when the
// harmonic geometry does not have the group's symmetry in either frame.
ModeSymmetryResult assign_mode_species(const PointGroupResult& group, const HarmonicResult& harmonic,
                                       const ModeSpeciesOptions& options = {});

// ---- Building the model ----------------------------------------------------------------

// The point group acting on the normal coordinates `modes` (3N × M, orthonormal columns
// spanning the assignment's sets: HarmonicResult::mass_weighted_modes, or the symmetry-
// adapted ones), in the frame the assignment found: R(g) from normal_coordinate_operations,
// the assignment's sets and species (a mode it left unassigned is a set of its own with
// unknown species) and the character table with ASCII labels. Throws Error when the sizes
// disagree.
ModeSymmetry mode_symmetry(const PointGroupResult& group, const ModeSymmetryResult& assignment,
                           const Eigen::MatrixXd& modes);

// The harmonic result with the modes of every degenerate set replaced by the assignment's
// symmetry-adapted partners (ModeSet::adapted_modes), and the model on those modes. Mode
// order and frequencies are unchanged; the per-mode quantities of replaced modes are
// recomputed (replace_mode_vector). The harmonic geometry must be the one the species were
// assigned at (the representation error tells how exact the group is on the modes).
// Throws Error when the sizes disagree.
struct SymmetryAdaptedHarmonic {
  HarmonicResult harmonic;
  ModeSymmetry symmetry;
};
SymmetryAdaptedHarmonic adapt_to_point_group(const HarmonicResult& harmonic, const PointGroupResult& group,
                                             const ModeSymmetryResult& species);

}  // namespace overtone
