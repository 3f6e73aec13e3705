#include "pipeline/molecule_input.hpp"

#include <fmt/format.h>
#include <openbabel/elements.h>

#include <algorithm>
#include <cmath>
#include <filesystem>

#include "core/error.hpp"
#include "core/text.hpp"
#include "core/warnings.hpp"

namespace overtone {

namespace {

bool has_toml_extension(const std::string& path) {
  return std::filesystem::path(path).extension() == ".toml";
}

double isotope_mass_da(int atomic_number, int mass_number) {
  return OpenBabel::OBElements::GetExactMass(static_cast<unsigned>(atomic_number),
                                             static_cast<unsigned>(mass_number));
}

// Mass numbers searched for a listed mass: every known nuclide has a mass number below
// 300 (common practice, no source).
constexpr int largest_mass_number = 300;

// The mass number whose isotope has this mass (0 for the most abundant one), or −1.
int mass_number_of(int atomic_number, double mass_da) {
  if (std::abs(isotope_mass_da(atomic_number, 0) - mass_da) <= mass_agreement_da) return 0;
  for (int a = 1; a < largest_mass_number; ++a) {
    const double mass = isotope_mass_da(atomic_number, a);
    if (mass > 0.0 && std::abs(mass - mass_da) <= mass_agreement_da) return a;
  }
  return -1;
}

}  // namespace

Molecule molecule_from_taylor_expansion(const TaylorExpansionData& data, const std::string& origin,
                                        std::vector<std::string>& warnings) {
  Molecule molecule;
  molecule.title = data.title;
  molecule.source = origin;
  const std::size_t atoms = data.atomic_numbers.size();
  if (static_cast<std::size_t>(data.reference_angstrom.size()) != 3 * atoms)
    throw Error(fmt::format("'{}' lists {} elements but {} coordinates", origin, atoms,
                            data.reference_angstrom.size()));
  for (std::size_t a = 0; a < atoms; ++a) {
    Atom atom;
    atom.atomic_number = data.atomic_numbers[a];
    atom.position_angstrom = data.reference_angstrom.segment<3>(static_cast<Eigen::Index>(3 * a));
    atom.mass_da = isotope_mass_da(atom.atomic_number, 0);
    if (static_cast<std::size_t>(data.masses_da.size()) == atoms) {
      const double listed = data.masses_da[static_cast<Eigen::Index>(a)];
      const int mass_number = mass_number_of(atom.atomic_number, listed);
      if (mass_number < 0)
        warnings.push_back(
            fmt::format("'{}': the mass {} Da of atom {} ({}) is no isotope's mass; used as given", origin,
                        listed, a + 1, element_symbol(atom.atomic_number)));
      atom.mass_number = std::max(mass_number, 0);
      atom.mass_da = listed;
    }
    molecule.atoms.push_back(atom);
  }
  return molecule;
}

LoadedMolecule load_molecule(const MoleculeInput& input) {
  LoadedMolecule loaded;
  if (!input.is_smiles && has_toml_extension(input.path_or_smiles) &&
      is_taylor_expansion_file(input.path_or_smiles)) {
    const TaylorExpansionData data = read_taylor_expansion(input.path_or_smiles);
    loaded.molecule = molecule_from_taylor_expansion(data, input.path_or_smiles, loaded.warnings);
    if (loaded.molecule.title.empty())
      loaded.molecule.title = std::filesystem::path(input.path_or_smiles).stem().string();
    apply_isotopes(loaded.molecule, input.isotopes);
    loaded.is_taylor_expansion = true;
    loaded.warnings = merge_repeated_warnings(loaded.warnings);
    return loaded;
  }
  ReadOptions options;
  options.format = input.format;
  options.input_is_smiles = input.is_smiles;
  options.isotopes = input.isotopes;
  options.incomplete_structures = input.incomplete_structures;
  ReadResult read = read_molecule(input.path_or_smiles, options);
  loaded.molecule = std::move(read.molecule);
  loaded.warnings = merge_repeated_warnings(read.warnings);
  return loaded;
}

std::vector<std::string> potential_mass_warnings(const Potential& potential, const Molecule& molecule) {
  const auto* expansion = dynamic_cast<const TaylorExpansionPotential*>(&potential);
  if (!expansion) return {};
  const Eigen::VectorXd& file_masses = expansion->data().masses_da;
  if (static_cast<std::size_t>(file_masses.size()) != molecule.atom_count()) return {};
  double largest = 0.0;
  std::size_t where = 0;
  for (std::size_t a = 0; a < molecule.atom_count(); ++a) {
    if (molecule.atoms[a].mass_number > 0) continue;  // an isotope the user chose
    const double difference = std::abs(file_masses[static_cast<Eigen::Index>(a)] - molecule.atoms[a].mass_da);
    if (difference > largest) {
      largest = difference;
      where = a;
    }
  }
  if (largest <= mass_agreement_da) return {};
  return {fmt::format(
      "the taylor expansion {} was computed with other masses than the molecule's (atom {} ({}): {} Da in "
      "the file, {} Da here); the surface is the file's, the harmonic analysis uses the molecule's masses, "
      "so wavenumbers differ from the file's listed ones; give the file itself as the molecule to use its "
      "masses",
      printable_text(potential.description()), where + 1, element_symbol(molecule.atoms[where].atomic_number),
      file_masses[static_cast<Eigen::Index>(where)], molecule.atoms[where].mass_da)};
}

}  // namespace overtone
