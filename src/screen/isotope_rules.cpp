#include "screen/isotope_rules.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cctype>
#include <map>
#include <sstream>

#include "core/error.hpp"
#include "molecule/substructure.hpp"

namespace overtone {

namespace {

constexpr const char* hydrogen_prefix = "H@";
constexpr int hydrogen_atomic_number = 1;
// No nuclide has a mass number of 300 or more (common practice, no source).
constexpr int largest_mass_number = 299;

IsotopeSubstitution parse_substitution(const std::string& text, const std::string& rule) {
  const auto equals = text.rfind('=');
  const std::string mass_text = equals == std::string::npos ? std::string() : text.substr(equals + 1);
  const bool digits = !mass_text.empty() && mass_text.size() <= 3 &&
                      std::all_of(mass_text.begin(), mass_text.end(),
                                  [](char c) { return std::isdigit(static_cast<unsigned char>(c)); });
  if (!digits)
    throw Error(
        fmt::format("isotope rule '{}': '{}' is not of the form SMARTS=A (A a mass number, e.g. C(=O)=13 or "
                    "H@[O,N;!H0]=2)",
                    rule, text));
  IsotopeSubstitution substitution;
  substitution.mass_number = std::stoi(mass_text);
  if (substitution.mass_number < 1 || substitution.mass_number > largest_mass_number)
    throw Error(fmt::format("isotope rule '{}': mass number must be in the range 1 to {}, got {}", rule,
                            largest_mass_number, substitution.mass_number));
  std::string pattern = text.substr(0, equals);
  if (pattern.rfind(hydrogen_prefix, 0) == 0) {
    substitution.hydrogens_of_targets = true;
    pattern.erase(0, std::string(hydrogen_prefix).size());
  }
  if (pattern.empty())
    throw Error(fmt::format("isotope rule '{}': '{}' has no smarts pattern before '='", rule, text));
  check_smarts(pattern);
  substitution.smarts = pattern;
  return substitution;
}

}  // namespace

IsotopeRule parse_isotope_rule(const std::string& text) {
  IsotopeRule rule;
  std::istringstream words(text);
  std::string word;
  while (words >> word) {
    rule.substitutions.push_back(parse_substitution(word, text));
    rule.text += (rule.text.empty() ? "" : " ") + word;
  }
  if (rule.substitutions.empty()) throw Error("an isotope rule is empty, expected SMARTS=A");
  return rule;
}

std::vector<IsotopeChoice> isotope_choices(const IsotopeRule& rule, const Molecule& molecule) {
  std::map<int, int> mass_of_atom;  // 0-based atom -> mass number
  for (const IsotopeSubstitution& substitution : rule.substitutions) {
    const SmartsMatches found = match_smarts(molecule, substitution.smarts);
    std::vector<int> targets;
    for (const std::vector<int>& match : found.matches) {
      if (found.mapped_positions.empty()) {
        targets.push_back(match.at(0));
      } else {
        for (int position : found.mapped_positions)
          targets.push_back(match.at(static_cast<std::size_t>(position)));
      }
    }
    if (substitution.hydrogens_of_targets) {
      std::vector<int> hydrogens;
      for (int target : targets)
        for (int neighbour : found.neighbours.at(static_cast<std::size_t>(target)))
          if (molecule.atoms.at(static_cast<std::size_t>(neighbour)).atomic_number == hydrogen_atomic_number)
            hydrogens.push_back(neighbour);
      targets = hydrogens;
    }
    for (int atom : targets) {
      const auto [where, inserted] = mass_of_atom.emplace(atom, substitution.mass_number);
      if (!inserted && where->second != substitution.mass_number)
        throw Error(fmt::format("isotope rule '{}' gives atom {} both mass number {} and {}", rule.text,
                                atom + 1, where->second, substitution.mass_number));
    }
  }
  std::vector<IsotopeChoice> choices;
  for (const auto& [atom, mass_number] : mass_of_atom) choices.push_back({atom + 1, mass_number});
  return choices;
}

}  // namespace overtone
