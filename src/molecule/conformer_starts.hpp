#pragma once
// Starting structures for a quick conformer search: other conformations of the same
// molecule (same atoms, same bonds, same stereoisomer) from which an optimizer may reach
// a lower minimum than the one the input structure leads to.
//
// Two sources, both from Open Babel:
//   - a structure rebuilt from the connectivity with Open Babel's builder, whose ring
//     templates give the usual ring conformations (the chair of cyclohexane);
//   - settings of the rotatable bonds (Open Babel's rotor list and its torsion values):
//     every combination when there are at most max_rotor_starts of them, else that many
//     combinations drawn with a fixed seed, so that runs repeat.
// A start keeps the atom order of the molecule. Starts whose stereo identity differs from
// the input's (the builder may invert a centre) and starts with overlapping atoms are
// dropped.
#include <Eigen/Dense>
#include <string>
#include <vector>

#include "core/molecule.hpp"

namespace overtone {

struct ConformerStartOptions {
  bool rebuild = true;       // add the structure rebuilt from the connectivity
  int max_rotor_starts = 6;  // at most this many settings of the rotatable bonds
  unsigned seed = 20250101;  // for drawing rotor settings when there are more combinations
  // Two atoms of a start closer than this (Å) overlap and the start is dropped: the
  // optimizer could not separate them reliably.
  double minimum_distance_angstrom = 0.7;

  void validate() const;  // throws Error naming the field that is out of range
};

struct ConformerStart {
  Eigen::VectorXd coordinates_angstrom;  // 3N, atom order of the molecule
  std::string origin;                    // "rebuilt from the connectivity", "rotor setting 3", ...
};

struct ConformerStartsResult {
  std::vector<ConformerStart> starts;
  int rotatable_bonds = 0;
  int dropped_other_stereoisomer = 0;
  int dropped_overlapping = 0;
  std::string stereo_identity;  // of the input structure (see stereo_identity)
};

// Throws Error when the molecule has no atoms or options are out of range.
ConformerStartsResult generate_conformer_starts(const Molecule& molecule,
                                                const ConformerStartOptions& options = {});

// Canonical isomeric SMILES of the structure at the given coordinates, with stereo
// perceived from those coordinates: two structures of one molecule with the same
// identity are conformers of one stereoisomer.
std::string stereo_identity(const Molecule& molecule, const Eigen::VectorXd& coordinates_angstrom);

}  // namespace overtone
