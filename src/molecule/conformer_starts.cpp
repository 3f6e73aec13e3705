#include "molecule/conformer_starts.hpp"

#include <fmt/format.h>
#include <openbabel/atom.h>
#include <openbabel/builder.h>
#include <openbabel/mol.h>
#include <openbabel/obconversion.h>
#include <openbabel/obiter.h>
#include <openbabel/rotor.h>
#include <openbabel/stereo/stereo.h>

#include <random>

#include "core/error.hpp"
#include "core/option_checks.hpp"
#include "molecule/openbabel_bridge.hpp"

namespace overtone {

namespace {

void set_coordinates(OpenBabel::OBMol& mol, const Eigen::VectorXd& coordinates) {
  int index = 0;
  FOR_ATOMS_OF_MOL(atom, mol) {
    atom->SetVector(coordinates[3 * index], coordinates[3 * index + 1], coordinates[3 * index + 2]);
    ++index;
  }
  mol.SetDimension(3);
}

Eigen::VectorXd coordinates_of(OpenBabel::OBMol& mol) {
  Eigen::VectorXd coordinates(3 * static_cast<Eigen::Index>(mol.NumAtoms()));
  int index = 0;
  FOR_ATOMS_OF_MOL(atom, mol) {
    coordinates.segment<3>(3 * index) << atom->GetX(), atom->GetY(), atom->GetZ();
    ++index;
  }
  return coordinates;
}

std::string canonical_isomeric_smiles(OpenBabel::OBMol& mol) {
  OpenBabel::StereoFrom3D(&mol, true);
  OpenBabel::OBConversion conversion;
  conversion.SetOutFormat("can");
  mol.SetTitle("");
  std::string text = conversion.WriteString(&mol, true);
  const auto end = text.find_first_of(" \t\r\n");
  if (end != std::string::npos) text.erase(end);
  return text;
}

double shortest_distance(const Eigen::VectorXd& x) {
  double shortest = std::numeric_limits<double>::infinity();
  for (Eigen::Index i = 0; i + 3 <= x.size(); i += 3)
    for (Eigen::Index j = i + 3; j + 3 <= x.size(); j += 3)
      shortest = std::min(shortest, (x.segment<3>(i) - x.segment<3>(j)).norm());
  return shortest;
}

struct Rotor {
  int dihedral[4] = {0, 0, 0, 0};  // 1-based atom indices
  std::vector<double> torsions_rad;
};

}  // namespace

std::string stereo_identity(const Molecule& molecule, const Eigen::VectorXd& coordinates_angstrom) {
  if (coordinates_angstrom.size() != 3 * static_cast<Eigen::Index>(molecule.atom_count()))
    throw Error(fmt::format("stereo identity: {} coordinates given for {} atoms", coordinates_angstrom.size(),
                            molecule.atom_count()));
  OpenBabelLogCapture quiet;
  OpenBabel::OBMol mol;
  openbabel_from_molecule(molecule, mol);
  set_coordinates(mol, coordinates_angstrom);
  return canonical_isomeric_smiles(mol);
}

void ConformerStartOptions::validate() const {
  option_checks::require_at_least("conformer", "max_rotor_starts", max_rotor_starts, 0);
  option_checks::require_non_negative("conformer", "minimum_distance_angstrom", minimum_distance_angstrom);
}

ConformerStartsResult generate_conformer_starts(const Molecule& molecule,
                                                const ConformerStartOptions& options) {
  options.validate();
  if (molecule.atom_count() == 0) throw Error("a conformer search needs atoms, got none");
  OpenBabelLogCapture quiet;
  run_openbabel_on_one_thread();
  ConformerStartsResult result;
  const Eigen::VectorXd input = molecule.coordinates();
  OpenBabel::OBMol mol;
  openbabel_from_molecule(molecule, mol);
  set_coordinates(mol, input);
  result.stereo_identity = canonical_isomeric_smiles(mol);

  const auto keep = [&](OpenBabel::OBMol& candidate, const std::string& origin) {
    const Eigen::VectorXd x = coordinates_of(candidate);
    if (!x.allFinite() || shortest_distance(x) < options.minimum_distance_angstrom) {
      ++result.dropped_overlapping;
      return;
    }
    if (canonical_isomeric_smiles(candidate) != result.stereo_identity) {
      ++result.dropped_other_stereoisomer;
      return;
    }
    result.starts.push_back({x, origin});
  };

  if (options.rebuild && molecule.atom_count() > 2) {
    OpenBabel::OBMol rebuilt(mol);
    OpenBabel::StereoFrom3D(&rebuilt, true);  // the builder keeps the stereo it is given
    OpenBabel::OBBuilder builder;
    if (builder.Build(rebuilt, false)) {
      shake_off_exact_angles(rebuilt);
      keep(rebuilt, "rebuilt from the connectivity");
    }
  }

  OpenBabel::OBRotorList rotor_list;
  std::vector<Rotor> rotors;
  if (options.max_rotor_starts > 0 && rotor_list.Setup(mol)) {
    OpenBabel::OBRotorIterator it;
    for (OpenBabel::OBRotor* rotor = rotor_list.BeginRotor(it); rotor; rotor = rotor_list.NextRotor(it)) {
      Rotor entry;
      rotor->GetDihedralAtoms(entry.dihedral);
      entry.torsions_rad = rotor->GetResolution();
      if (!entry.torsions_rad.empty()) rotors.push_back(entry);
    }
  }
  result.rotatable_bonds = static_cast<int>(rotors.size());
  if (!rotors.empty()) {
    // Every combination when there are few, else a fixed-seed sample of them.
    double combinations = 1.0;
    for (const Rotor& rotor : rotors) combinations *= static_cast<double>(rotor.torsions_rad.size());
    const bool every = combinations <= options.max_rotor_starts;
    const int count = every ? static_cast<int>(combinations) : options.max_rotor_starts;
    std::mt19937 random(options.seed);
    for (int k = 0; k < count; ++k) {
      OpenBabel::OBMol setting(mol);
      int code = k;
      for (const Rotor& rotor : rotors) {
        const int choices = static_cast<int>(rotor.torsions_rad.size());
        const int choice =
            every ? code % choices : static_cast<int>(random() % static_cast<unsigned>(choices));
        code /= choices;
        setting.SetTorsion(setting.GetAtom(rotor.dihedral[0]), setting.GetAtom(rotor.dihedral[1]),
                           setting.GetAtom(rotor.dihedral[2]), setting.GetAtom(rotor.dihedral[3]),
                           rotor.torsions_rad[static_cast<std::size_t>(choice)]);
      }
      keep(setting, fmt::format("rotor setting {}", k + 1));
    }
  }
  return result;
}

}  // namespace overtone
