#pragma once
// Plain molecular data passed between stages. Coordinates are in Å, masses in Da.
// A 3N coordinate vector is atom-major: (x1, y1, z1, x2, ...).
#include <Eigen/Dense>
#include <string>
#include <vector>

namespace overtone {

struct Atom {
  int atomic_number = 0;
  int mass_number = 0;   // 0: the element's most abundant isotope (the usual choice for spectra)
  double mass_da = 0.0;  // the mass used in the vibrational analysis
  int formal_charge = 0;
  Eigen::Vector3d position_angstrom = Eigen::Vector3d::Zero();
};

struct Bond {
  int first = 0;  // 0-based atom indices
  int second = 0;
  int order = 1;  // 1, 2, 3; 5 marks aromatic (as read from the file)
};

struct Molecule {
  std::string title;
  std::string source;  // file path or SMILES it came from
  std::vector<Atom> atoms;
  std::vector<Bond> bonds;  // as read or perceived; force fields that type atoms need them
  int total_charge = 0;
  int spin_multiplicity = 1;

  std::size_t atom_count() const { return atoms.size(); }
  // 3N vector of positions (Å), atom-major.
  Eigen::VectorXd coordinates() const;
  void set_coordinates(const Eigen::VectorXd& coordinates_angstrom);
  // N masses (Da).
  Eigen::VectorXd masses() const;
  // Hill-order formula, e.g. "CH4", "H2O".
  std::string formula() const;
};

// Element symbol for an atomic number (Open Babel's element table); throws Error
// for numbers outside the table.
std::string element_symbol(int atomic_number);

// Symbol with the isotope written in front when one was chosen, e.g. "D" style is
// not used: "2H", "13C"; plain symbol for natural masses.
std::string isotope_label(const Atom& atom);

}  // namespace overtone
