#pragma once
// Symmetry of normal modes: the decomposition of the vibrational representation from
// the geometry alone, the symmetrized Cartesian Hessian, the species of every mode and
// of every degenerate set (recognized by frequency and confirmed by projection), and
// the real matrices D(g) by which each operation acts on each set of normal
// coordinates (the group data the nonlinear-mode families need).
//
// Action of an operation on a 3N vector v (Cartesian or mass-weighted Cartesian; the
// two agree because permuted atoms have equal masses): (D(g)·v)_{π_g(i)} = R_g·v_i,
// with π_g = PointGroupResult::permutations[g] and R_g the operation matrix in the
// frame of v.
#include <Eigen/Dense>
#include <string>
#include <vector>

#include "harmonic/harmonic.hpp"
#include "symmetry/detect_point_group.hpp"

namespace overtone {

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

struct ModeSpeciesOptions {
  // Modes whose |frequency| differ by at most this (cm⁻¹, chained) are candidates for one
  // degenerate set; projection then decides. A symmetrized Hessian gives degenerate
  // frequencies equal to ~1e-8 cm⁻¹; an unsymmetrized finite-difference one to ~0.1.
  double degeneracy_tolerance_cm1 = 0.5;
  // A set whose projection onto its species falls below 1 − purity_tolerance
  // (dimensionless fraction of the set's span) is reported as impure.
  double purity_tolerance = 0.02;
  // Largest displacement (Å) an operation may leave between an atom of the harmonic
  // geometry and its image, when checking in which frame that geometry is given;
  // negative means 2·(the group's detection tolerance).
  double frame_check_tolerance_angstrom = -1.0;
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
  // D(g) = Bᵀ·D(g)·B in that basis, one d×d real matrix per operation (group order).
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

}  // namespace overtone
