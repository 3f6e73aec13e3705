#pragma once
// Molecules in: any format Open Babel reads, or a SMILES string (3-D structure built
// by Open Babel, then pre-optimized with its MMFF94 or UFF), with optional isotopes.
#include <string>
#include <utility>
#include <vector>

#include "core/molecule.hpp"

namespace overtone {

struct IsotopeChoice {
  int atom_number = 0;  // 1-based, as in the file
  int mass_number = 0;  // e.g. 2 for deuterium, 13 for carbon-13
};

// Parses "N=A" (atom number N, mass number A); throws Error with the text if malformed.
IsotopeChoice parse_isotope_choice(const std::string& text);

struct ReadOptions {
  // Format name as Open Babel knows it ("xyz", "sdf", "mol2", "cml", "pdb", "smi", …);
  // empty means: from the file extension.
  std::string format;
  // Treat the input string as SMILES rather than as a path.
  bool input_is_smiles = false;
  std::vector<IsotopeChoice> isotopes;
  // Two atoms closer than this (Å) are rejected as overlapping. The shortest real
  // bond (H–H, 0.74 Å) is far above it.
  double minimum_interatomic_distance_angstrom = 0.4;
  // For multi-structure files: which structure (0-based).
  int structure_index = 0;
};

struct ReadResult {
  Molecule molecule;
  std::string format_used;
  bool geometry_built_from_smiles = false;
  std::vector<std::string> warnings;
};

// Throws Error for a missing, unreadable or empty file, an unknown format, an unknown
// element, overlapping atoms, an isotope outside the element's known isotopes or an
// atom number outside the molecule.
ReadResult read_molecule(const std::string& path_or_smiles, const ReadOptions& options = {});

// Applies isotope choices (1-based atom numbers) with masses from Open Babel's
// isotope table; throws Error for a nonexistent isotope.
void apply_isotopes(Molecule& molecule, const std::vector<IsotopeChoice>& isotopes);

}  // namespace overtone
