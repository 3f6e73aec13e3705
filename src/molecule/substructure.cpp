#include "molecule/substructure.hpp"

#include <fmt/format.h>
#include <openbabel/atom.h>
#include <openbabel/mol.h>
#include <openbabel/obiter.h>
#include <openbabel/parsmart.h>

#include "core/error.hpp"
#include "molecule/openbabel_bridge.hpp"

namespace overtone {

namespace {

void initialize(OpenBabel::OBSmartsPattern& pattern, const std::string& smarts) {
  OpenBabelLogCapture messages;
  if (smarts.empty() || !pattern.Init(smarts)) {
    const std::string detail = messages.first_message();
    throw Error(fmt::format("'{}' is not a valid smarts pattern{}", smarts,
                            detail.empty() ? "" : " (open babel: " + detail + ")"));
  }
}

}  // namespace

void check_smarts(const std::string& smarts) {
  OpenBabel::OBSmartsPattern pattern;
  initialize(pattern, smarts);
}

SmartsMatches match_smarts(const Molecule& molecule, const std::string& smarts) {
  OpenBabel::OBSmartsPattern pattern;
  initialize(pattern, smarts);
  OpenBabel::OBMol mol;
  openbabel_from_molecule(molecule, mol);
  SmartsMatches result;
  for (unsigned position = 0; position < pattern.NumAtoms(); ++position)
    if (pattern.GetVectorBinding(static_cast<int>(position)) > 0)
      result.mapped_positions.push_back(static_cast<int>(position));
  if (pattern.Match(mol))
    for (const std::vector<int>& match : pattern.GetUMapList()) {
      std::vector<int> atoms;
      for (int index : match) atoms.push_back(index - 1);  // Open Babel counts from 1
      result.matches.push_back(atoms);
    }
  result.neighbours.resize(molecule.atom_count());
  FOR_ATOMS_OF_MOL(atom, mol) {
    FOR_NBORS_OF_ATOM(neighbour, &*atom) {
      result.neighbours[atom->GetIdx() - 1].push_back(static_cast<int>(neighbour->GetIdx()) - 1);
    }
  }
  return result;
}

}  // namespace overtone
