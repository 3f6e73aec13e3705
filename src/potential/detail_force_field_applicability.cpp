#include "potential/detail_force_field_applicability.hpp"

#include <fmt/format.h>
#include <openbabel/atom.h>
#include <openbabel/elements.h>
#include <openbabel/mol.h>
#include <openbabel/obfunctions.h>
#include <openbabel/obiter.h>

#include <cstdlib>

#include "core/molecule.hpp"

namespace overtone::detail {

std::vector<std::string> force_field_applicability_warnings(OpenBabel::OBMol& mol, const std::string& name) {
  std::vector<std::string> warnings;
  long electrons = -static_cast<long>(mol.GetTotalCharge());
  std::vector<std::string> under_valent;
  bool carbon = false;
  std::string multiply_charged;
  FOR_ATOMS_OF_MOL(atom, mol) {
    const unsigned z = atom->GetAtomicNum();
    electrons += static_cast<long>(z);
    carbon = carbon || z == 6;
    const unsigned bonds = atom->GetExplicitValence();
    const int charge = atom->GetFormalCharge();
    const unsigned typical = OpenBabel::GetTypicalValence(z, bonds, charge);
    const std::string label = element_symbol(static_cast<int>(z)) + std::to_string(atom->GetIdx());
    if (typical > bonds)
      under_valent.push_back(
          fmt::format("atom {} has {} bond(s) fewer than its usual valence", label, typical - bonds));
    if (std::abs(charge) > 1) multiply_charged += (multiply_charged.empty() ? "" : ", ") + label;
  }
  auto joined = [](const std::vector<std::string>& parts) {
    std::string text;
    for (const auto& part : parts) text += (text.empty() ? "" : "; ") + part;
    return text;
  };
  std::vector<std::string> open_shell;
  if (electrons % 2 != 0) open_shell.push_back(fmt::format("an odd number of electrons, {}", electrons));
  open_shell.insert(open_shell.end(), under_valent.begin(), under_valent.end());
  if (mol.GetTotalSpinMultiplicity() > 1)
    open_shell.push_back(fmt::format("spin multiplicity {}", mol.GetTotalSpinMultiplicity()));
  if (!open_shell.empty())
    warnings.push_back(
        fmt::format("{} is parameterized for closed-shell molecules with the usual valences, but this one is "
                    "a radical or "
                    "carbene ({}): treat its energies and frequencies as rough",
                    name, joined(open_shell)));

  const int net = mol.GetTotalCharge();
  if (name == "UFF") {
    if (net != 0)
      warnings.push_back(
          fmt::format("UFF as Open Babel implements it has no electrostatic term, so the net charge {:+d} of "
                      "this ion does "
                      "not enter the energy at all",
                      net));
    return warnings;
  }
  std::vector<std::string> ionic;
  if (std::abs(net) > 1) ionic.push_back(fmt::format("net charge {:+d}", net));
  if (!multiply_charged.empty()) ionic.push_back("a formal charge beyond ±1 on " + multiply_charged);
  if (net != 0 && !carbon) ionic.push_back(fmt::format("an inorganic ion of charge {:+d}", net));
  if (!ionic.empty())
    warnings.push_back(
        fmt::format("{} is parameterized for neutral organic molecules and singly charged organic ions, and "
                    "this one lies "
                    "outside that ({}): treat its energies and frequencies as rough",
                    name, joined(ionic)));
  return warnings;
}

}  // namespace overtone::detail
