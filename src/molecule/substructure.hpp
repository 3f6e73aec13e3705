#pragma once
// SMARTS substructure matches on a molecule (Open Babel's OBSmartsPattern), for rules
// that pick atoms by their chemical surroundings (isotope rules of screening).
#include <string>
#include <vector>

#include "core/molecule.hpp"

namespace overtone {

struct SmartsMatches {
  // One entry per unique match (distinct atom sets): 0-based molecule atom indices in
  // the order of the pattern's atoms.
  std::vector<std::vector<int>> matches;
  // Positions (0-based) of the pattern atoms that carry an atom-map number, e.g. the
  // oxygen of "C=[O:1]"; empty when none does.
  std::vector<int> mapped_positions;
  // Bonded neighbours of every atom (0-based), as Open Babel sees the molecule (bonds as
  // read, or perceived from the geometry when the molecule has none).
  std::vector<std::vector<int>> neighbours;
};

// Throws Error when the pattern is not valid SMARTS.
void check_smarts(const std::string& smarts);

// Matches of the pattern. Throws Error when the pattern is not valid SMARTS.
SmartsMatches match_smarts(const Molecule& molecule, const std::string& smarts);

}  // namespace overtone
