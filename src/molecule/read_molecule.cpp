#include "molecule/read_molecule.hpp"

#include <fmt/format.h>
#include <openbabel/atom.h>
#include <openbabel/bond.h>
#include <openbabel/builder.h>
#include <openbabel/elements.h>
#include <openbabel/forcefield.h>
#include <openbabel/mol.h>
#include <openbabel/obconversion.h>
#include <openbabel/oberror.h>
#include <openbabel/obiter.h>

#include <filesystem>
#include <fstream>
#include <regex>
#include <sstream>

#include "core/error.hpp"
#include "molecule/openbabel_bridge.hpp"

namespace overtone {

namespace {

std::string extension_of(const std::string& path) {
  std::string ext = std::filesystem::path(path).extension().string();
  if (!ext.empty() && ext.front() == '.') ext.erase(0, 1);
  for (auto& c : ext) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return ext;
}

void check_readable_file(const std::string& path) {
  namespace fs = std::filesystem;
  std::error_code ec;
  if (!fs::exists(path, ec)) throw Error(fmt::format("molecule file '{}' does not exist", path));
  if (fs::is_directory(path, ec))
    throw Error(fmt::format("'{}' is a directory, expected a molecule file", path));
  std::ifstream probe(path);
  if (!probe) throw Error(fmt::format("molecule file '{}' cannot be opened for reading", path));
  if (fs::file_size(path, ec) == 0) throw Error(fmt::format("molecule file '{}' is empty", path));
}

OpenBabel::OBFormat* choose_format(OpenBabel::OBConversion& conversion, const std::string& path,
                                   const ReadOptions& options, std::string& name) {
  name = options.format.empty() ? extension_of(path) : options.format;
  if (name.empty())
    throw Error(
        fmt::format("cannot tell the format of '{}': give the file an extension such as .xyz or .sdf", path));
  OpenBabel::OBFormat* format = conversion.FindFormat(name);
  if (!format)
    throw Error(fmt::format("'{}' is not a molecule format Open Babel can read (file '{}')", name, path));
  return format;
}

void build_geometry_from_smiles(OpenBabel::OBMol& mol, std::vector<std::string>& warnings) {
  mol.AddHydrogens();
  run_openbabel_on_one_thread();
  OpenBabel::OBBuilder builder;
  if (!builder.Build(mol)) throw Error("open babel could not build a 3-d structure from the smiles");
  // A rough clean-up so the project's own optimizer starts near a minimum.
  for (const char* name : {"MMFF94", "UFF"}) {
    OpenBabel::OBForceField* field = OpenBabel::OBForceField::FindForceField(name);
    if (field && field->Setup(mol)) {
      field->ConjugateGradients(500);
      field->GetCoordinates(mol);
      return;
    }
  }
  warnings.push_back("no open babel force field could clean up the structure built from smiles");
}

void check_geometry(const Molecule& molecule, double minimum_distance) {
  for (std::size_t i = 0; i < molecule.atoms.size(); ++i)
    for (std::size_t j = i + 1; j < molecule.atoms.size(); ++j) {
      const double d = (molecule.atoms[i].position_angstrom - molecule.atoms[j].position_angstrom).norm();
      if (d < minimum_distance)
        throw Error(
            fmt::format("atoms {} and {} are {:.3f} Å apart, closer than the physical minimum {:.2f} Å "
                        "(overlapping atoms in the input?)",
                        i + 1, j + 1, d, minimum_distance));
    }
}

ReadResult finish(OpenBabel::OBMol& mol, const std::string& source, const std::string& format_name,
                  const ReadOptions& options, bool from_smiles, std::vector<std::string> warnings) {
  ReadResult result;
  result.molecule = molecule_from_openbabel(mol);
  result.molecule.source = source;
  result.format_used = format_name;
  result.geometry_built_from_smiles = from_smiles;
  result.warnings = std::move(warnings);
  check_geometry(result.molecule, options.minimum_interatomic_distance_angstrom);
  apply_isotopes(result.molecule, options.isotopes);
  return result;
}

}  // namespace

IsotopeChoice parse_isotope_choice(const std::string& text) {
  static const std::regex pattern(R"(\s*(\d+)\s*=\s*(\d+)\s*)");
  std::smatch match;
  if (!std::regex_match(text, match, pattern))
    throw Error(
        fmt::format("isotope choice '{}' is not of the form N=A (atom number N, mass number A), "
                    "e.g. 2=2 for deuterium on atom 2",
                    text));
  IsotopeChoice choice;
  try {
    choice.atom_number = std::stoi(match[1]);
    choice.mass_number = std::stoi(match[2]);
  } catch (const std::exception&) {
    throw Error(fmt::format("isotope choice '{}' has a number out of range", text));
  }
  return choice;
}

void apply_isotopes(Molecule& molecule, const std::vector<IsotopeChoice>& isotopes) {
  for (const auto& choice : isotopes) {
    if (choice.atom_number < 1 || choice.atom_number > static_cast<int>(molecule.atoms.size()))
      throw Error(fmt::format("isotope choice for atom {}: the molecule has atoms 1 to {}",
                              choice.atom_number, molecule.atoms.size()));
    Atom& atom = molecule.atoms[static_cast<std::size_t>(choice.atom_number - 1)];
    const double mass = choice.mass_number > 0
                            ? OpenBabel::OBElements::GetExactMass(static_cast<unsigned>(atom.atomic_number),
                                                                  static_cast<unsigned>(choice.mass_number))
                            : 0.0;
    if (!(mass > 0.0))
      throw Error(fmt::format("there is no isotope {}{} (atom {}) in Open Babel's isotope table",
                              choice.mass_number, element_symbol(atom.atomic_number), choice.atom_number));
    atom.mass_number = choice.mass_number;
    atom.mass_da = mass;
  }
}

ReadResult read_molecule(const std::string& path_or_smiles, const ReadOptions& options) {
  OpenBabelLogCapture messages;
  OpenBabel::OBConversion conversion;
  OpenBabel::OBMol mol;
  if (options.input_is_smiles) {
    if (path_or_smiles.find_first_not_of(" \t") == std::string::npos)
      throw Error("the smiles string is empty");
    conversion.SetInFormat("smi");
    if (!conversion.ReadString(&mol, path_or_smiles) || mol.NumAtoms() == 0) {
      const std::string detail = messages.first_message();
      throw Error(fmt::format("'{}' is not a valid smiles string{}", path_or_smiles,
                              detail.empty() ? "" : " (open babel: " + detail + ")"));
    }
    std::vector<std::string> warnings;
    build_geometry_from_smiles(mol, warnings);
    ReadResult result = finish(mol, "smiles:" + path_or_smiles, "smi", options, true, std::move(warnings));
    if (result.molecule.title.empty()) result.molecule.title = path_or_smiles;
    return result;
  }

  check_readable_file(path_or_smiles);
  std::string format_name;
  conversion.SetInFormat(choose_format(conversion, path_or_smiles, options, format_name));
  std::ifstream stream(path_or_smiles);
  bool read_ok = conversion.Read(&mol, &stream);
  for (int skipped = 0; read_ok && skipped < options.structure_index; ++skipped) {
    mol.Clear();
    read_ok = conversion.Read(&mol);
  }
  if (!read_ok || mol.NumAtoms() == 0) {
    const std::string detail = messages.first_message();
    throw Error(
        fmt::format("no molecule could be read from '{}' as {}{}", path_or_smiles, format_name,
                    detail.empty() ? " (is the file in that format?)" : " (open babel: " + detail + ")"));
  }
  ReadResult result = finish(mol, path_or_smiles, format_name, options, false, {});
  if (result.molecule.title.empty())
    result.molecule.title = std::filesystem::path(path_or_smiles).stem().string();
  return result;
}

}  // namespace overtone
