#include "core/molecule.hpp"

#include <openbabel/elements.h>

#include <map>

#include "core/error.hpp"

namespace overtone {

Eigen::VectorXd Molecule::coordinates() const {
  Eigen::VectorXd x(3 * atoms.size());
  for (std::size_t i = 0; i < atoms.size(); ++i) x.segment<3>(3 * i) = atoms[i].position_angstrom;
  return x;
}

void Molecule::set_coordinates(const Eigen::VectorXd& coordinates_angstrom) {
  if (coordinates_angstrom.size() != static_cast<Eigen::Index>(3 * atoms.size()))
    throw Error("coordinate vector has " + std::to_string(coordinates_angstrom.size()) +
                " entries, expected " + std::to_string(3 * atoms.size()));
  for (std::size_t i = 0; i < atoms.size(); ++i)
    atoms[i].position_angstrom = coordinates_angstrom.segment<3>(3 * i);
}

Eigen::VectorXd Molecule::masses() const {
  Eigen::VectorXd m(atoms.size());
  for (std::size_t i = 0; i < atoms.size(); ++i) m[i] = atoms[i].mass_da;
  return m;
}

std::string Molecule::formula() const {
  std::map<std::string, int> counts;
  bool has_carbon = false;
  for (const auto& atom : atoms) {
    ++counts[element_symbol(atom.atomic_number)];
    has_carbon = has_carbon || atom.atomic_number == 6;
  }
  std::string result;
  auto append = [&](const std::string& symbol) {
    auto it = counts.find(symbol);
    if (it == counts.end()) return;
    result += symbol;
    if (it->second > 1) result += std::to_string(it->second);
    counts.erase(it);
  };
  // Hill order: C, then H, then the rest alphabetically; without carbon, all alphabetical.
  if (has_carbon) {
    append("C");
    append("H");
  }
  while (!counts.empty()) append(counts.begin()->first);
  return result;
}

std::string element_symbol(int atomic_number) {
  if (atomic_number < 1 || atomic_number > 118)
    throw Error("atomic number " + std::to_string(atomic_number) + " is outside the element table");
  return OpenBabel::OBElements::GetSymbol(static_cast<unsigned>(atomic_number));
}

std::string isotope_label(const Atom& atom) {
  const std::string symbol = element_symbol(atom.atomic_number);
  return atom.mass_number > 0 ? std::to_string(atom.mass_number) + symbol : symbol;
}

}  // namespace overtone
