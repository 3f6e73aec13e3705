#pragma once
// Isotope rules: isotopologue series without new files. A rule picks atoms by their
// chemical surroundings with SMARTS patterns (matched by Open Babel) and gives them a
// mass number; every rule makes one isotopologue of each molecule, computed beside the
// parent (docs/screening.md, "Isotope rules").
//
//   RULE         := SUBSTITUTION { ' ' SUBSTITUTION }     all applied together
//   SUBSTITUTION := [ 'H@' ] SMARTS '=' MASS_NUMBER
//
// Targets of a substitution, in every match of the SMARTS: the atoms that carry an atom-map
// number in the pattern ("C=[O:1]" marks the oxygen), or the first atom of the pattern
// when none does; with the prefix "H@", the hydrogen atoms bonded to those targets
// instead. The mass number follows the last '=' (SMARTS uses '=' for double bonds).
//
//   "C(=O)=13"          every carbonyl carbon to carbon-13
//   "C=[O:1]=18"        every carbonyl oxygen to oxygen-18
//   "H@[O,N;!H0]=2"     every hydrogen on oxygen or nitrogen (exchangeable) to deuterium
//   "C(=O)=13 C=[O:1]=18"   both at once (¹³C¹⁸O)
#include <string>
#include <vector>

#include "core/molecule.hpp"
#include "molecule/read_molecule.hpp"

namespace overtone {

struct IsotopeSubstitution {
  std::string smarts;
  bool hydrogens_of_targets = false;  // the "H@" prefix
  int mass_number = 0;
};

struct IsotopeRule {
  std::string text;  // normalized: substitutions separated by single spaces; names the variant
  std::vector<IsotopeSubstitution> substitutions;
};

// Throws Error for text that does not follow the syntax, a mass number that is not a
// positive integer, or a pattern that is not valid SMARTS.
IsotopeRule parse_isotope_rule(const std::string& text);

// The isotope choices (1-based atom numbers, ascending) the rule makes on this molecule;
// empty when no substitution matches an atom. Throws Error when two substitutions give
// one atom different mass numbers.
std::vector<IsotopeChoice> isotope_choices(const IsotopeRule& rule, const Molecule& molecule);

}  // namespace overtone
