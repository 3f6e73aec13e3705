#include "molecule/openbabel_bridge.hpp"

#include <fmt/format.h>
#include <omp.h>
#include <openbabel/atom.h>
#include <openbabel/bond.h>
#include <openbabel/elements.h>
#include <openbabel/oberror.h>
#include <openbabel/obiter.h>

#include <cmath>
#include <sstream>

#include "core/error.hpp"

namespace overtone {

void run_openbabel_on_one_thread() { omp_set_num_threads(1); }

void shake_off_exact_angles(OpenBabel::OBMol& mol) {
  constexpr double shake_angstrom = 0.01;
  // sin of a large multiple of the coordinate index: a fixed, irregular pattern.
  constexpr double pattern_frequency = 12.9898;
  int coordinate = 0;
  FOR_ATOMS_OF_MOL(atom, mol) {
    double shift[3];
    for (double& component : shift) component = shake_angstrom * std::sin(pattern_frequency * ++coordinate);
    atom->SetVector(atom->GetX() + shift[0], atom->GetY() + shift[1], atom->GetZ() + shift[2]);
  }
}

Molecule molecule_from_openbabel(OpenBabel::OBMol& mol) {
  Molecule molecule;
  molecule.title = mol.GetTitle();
  molecule.total_charge = mol.GetTotalCharge();
  molecule.spin_multiplicity = static_cast<int>(mol.GetTotalSpinMultiplicity());
  int index = 0;
  FOR_ATOMS_OF_MOL(ob_atom, mol) {
    ++index;
    Atom atom;
    atom.atomic_number = static_cast<int>(ob_atom->GetAtomicNum());
    if (atom.atomic_number < 1)
      throw Error(fmt::format("atom {} has an element symbol Open Babel does not know", index));
    const unsigned isotope = ob_atom->GetIsotope();
    atom.mass_number = static_cast<int>(isotope);
    atom.mass_da = OpenBabel::OBElements::GetExactMass(static_cast<unsigned>(atom.atomic_number), isotope);
    if (!(atom.mass_da > 0.0))
      throw Error(fmt::format("atom {}: there is no isotope {}{} in Open Babel's isotope table", index,
                              isotope, element_symbol(atom.atomic_number)));
    atom.formal_charge = ob_atom->GetFormalCharge();
    atom.position_angstrom = {ob_atom->GetX(), ob_atom->GetY(), ob_atom->GetZ()};
    molecule.atoms.push_back(atom);
  }
  FOR_BONDS_OF_MOL(ob_bond, mol) {
    Bond bond;
    bond.first = static_cast<int>(ob_bond->GetBeginAtomIdx()) - 1;
    bond.second = static_cast<int>(ob_bond->GetEndAtomIdx()) - 1;
    bond.order = static_cast<int>(ob_bond->GetBondOrder());
    molecule.bonds.push_back(bond);
  }
  return molecule;
}

void openbabel_from_molecule(const Molecule& molecule, OpenBabel::OBMol& mol, bool with_isotopes) {
  mol.Clear();
  mol.BeginModify();
  for (const auto& atom : molecule.atoms) {
    OpenBabel::OBAtom* ob_atom = mol.NewAtom();
    ob_atom->SetAtomicNum(static_cast<unsigned>(atom.atomic_number));
    if (with_isotopes && atom.mass_number > 0) ob_atom->SetIsotope(static_cast<unsigned>(atom.mass_number));
    ob_atom->SetFormalCharge(atom.formal_charge);
    ob_atom->SetVector(atom.position_angstrom.x(), atom.position_angstrom.y(), atom.position_angstrom.z());
  }
  for (const auto& bond : molecule.bonds) mol.AddBond(bond.first + 1, bond.second + 1, bond.order);
  mol.EndModify();
  if (molecule.bonds.empty() && molecule.atoms.size() > 1) {
    mol.ConnectTheDots();
    mol.PerceiveBondOrders();
  }
  mol.SetTotalCharge(molecule.total_charge);
  mol.SetTotalSpinMultiplicity(static_cast<unsigned>(molecule.spin_multiplicity));
}

namespace {
std::ostringstream& process_log_sink() {
  static std::ostringstream sink;
  return sink;
}
}  // namespace

OpenBabelLogCapture::OpenBabelLogCapture() {
  std::ostringstream& sink = process_log_sink();
  OpenBabel::obErrorLog.SetOutputStream(&sink);
  OpenBabel::obErrorLog.SetOutputLevel(OpenBabel::obWarning);
  start_ = sink.str().size();
}

std::string OpenBabelLogCapture::first_message() const {
  const std::string text = process_log_sink().str();
  std::istringstream lines(start_ < text.size() ? text.substr(start_) : std::string());
  std::string line;
  while (std::getline(lines, line)) {
    const auto start = line.find_first_not_of("=* \t");
    if (start == std::string::npos) continue;
    line = line.substr(start);
    if (line.rfind("Open Babel", 0) == 0) continue;
    return line;
  }
  return {};
}

}  // namespace overtone
