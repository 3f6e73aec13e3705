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

// Longest isotope choice text accepted: two numbers far beyond any atom count or
// mass number, with spaces around them.
inline constexpr std::size_t max_isotope_choice_length = 32;

// Parses "N=A" (atom number N, mass number A; spaces allowed around each number).
// Throws Error quoting the text when it is malformed, longer than
// max_isotope_choice_length or holds a number out of int range.
IsotopeChoice parse_isotope_choice(const std::string& text);

// What happens to a structure that is a 2-D (or 0-D) drawing, or whose hydrogens are
// left implicit (no hydrogen atom in the file although the bonds call for some):
//   complete: add the hydrogens and, for a drawing, build 3-D coordinates with Open
//             Babel as for SMILES; a warning says so (most SDF collections are drawn
//             this way, and a spectroscopist wants the whole molecule analysed);
//   refuse:   throw Error, so that only structures complete as given are analysed.
enum class IncompleteStructurePolicy { complete, refuse };

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
  IncompleteStructurePolicy incomplete_structures = IncompleteStructurePolicy::complete;
  // A "3-D" structure whose atoms all lie within this distance (Å) of one plane,
  // although an atom with four neighbours (counting implicit hydrogens) makes the
  // molecule non-planar, is a drawing written with z = 0. Coordinates of drawings are
  // given to 0.0001 Å; a real tetrahedral centre lifts atoms ~0.5 Å out of any plane.
  double flat_drawing_tolerance_angstrom = 0.01;

  void validate() const;  // throws Error naming the field that is out of range
};

struct ReadResult {
  Molecule molecule;
  std::string format_used;
  bool geometry_built_from_smiles = false;
  // The file held a 2-D (or 0-D) drawing, and Open Babel built the 3-D coordinates.
  bool geometry_built_from_drawing = false;
  int hydrogens_added = 0;  // hydrogen atoms added to a structure that left them implicit
  std::vector<std::string> warnings;
};

// Throws Error for a missing, unreadable or empty file, an unknown format, an unknown
// element, a non-finite coordinate (naming its line), an XYZ file with more atom lines
// than its atom count, overlapping atoms, an isotope outside the element's known
// isotopes or an atom number outside the molecule, and (with
// IncompleteStructurePolicy::refuse) a drawing or a structure without its hydrogens.
// Added hydrogens follow the atoms of the file, so atom numbers for isotopes stay
// those of the file.
ReadResult read_molecule(const std::string& path_or_smiles, const ReadOptions& options = {});

// Applies isotope choices (1-based atom numbers) with masses from Open Babel's
// isotope table; throws Error for a nonexistent isotope, an atom number outside the
// molecule, or two choices for one atom.
void apply_isotopes(Molecule& molecule, const std::vector<IsotopeChoice>& isotopes);

}  // namespace overtone
