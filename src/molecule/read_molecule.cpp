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

#include <Eigen/Dense>
#include <cctype>
#include <charconv>
#include <cmath>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string_view>

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

// 3-D coordinates from the connectivity (and the stereo read from the input), then a
// rough clean-up so the project's own optimizer starts near a minimum.
void build_three_dimensional(OpenBabel::OBMol& mol, const std::string& what,
                             std::vector<std::string>& warnings) {
  run_openbabel_on_one_thread();
  OpenBabel::OBBuilder builder;
  if (!builder.Build(mol)) throw Error("open babel could not build a 3-d structure from " + what);
  mol.SetDimension(3);
  shake_off_exact_angles(mol);
  // The builder joins fragments without looking at clashes (atoms 0.33 Å apart in 7 of
  // the 200 NCI records); 100 conjugate-gradient steps separate them and leave the rest
  // to the optimizer (measured on those records: 100 steps give the same outcomes as
  // 500 at a fifth of the cost, 0 steps leave the clashes).
  constexpr int clean_up_steps = 100;
  for (const char* name : {"MMFF94", "UFF"}) {
    OpenBabel::OBForceField* field = OpenBabel::OBForceField::FindForceField(name);
    if (field && field->Setup(mol)) {
      field->ConjugateGradients(clean_up_steps);
      field->GetCoordinates(mol);
      FOR_ATOMS_OF_MOL(atom, mol)
      if (!std::isfinite(atom->GetX()) || !std::isfinite(atom->GetY()) || !std::isfinite(atom->GetZ()))
        throw Error("open babel's clean-up of the structure built from " + what +
                    " gave non-finite coordinates");
      return;
    }
  }
  warnings.push_back("no open babel force field could clean up the structure built from " + what);
}

void build_geometry_from_smiles(OpenBabel::OBMol& mol, std::vector<std::string>& warnings) {
  mol.AddHydrogens();
  build_three_dimensional(mol, "the smiles", warnings);
}

// Line (1-based) of the first number in the file that reads as NaN or infinity
// (nan, inf, 1e999, ...), or 0 when there is none. Tokens are split at white space
// and at the punctuation of the text formats Open Babel reads (quotes, =, commas,
// angle brackets), so that XML attributes are found too.
int first_line_with_non_finite_number(const std::string& path) {
  std::ifstream in(path);
  std::string line;
  int number = 0;
  const auto is_separator = [](char c) {
    return std::isspace(static_cast<unsigned char>(c)) || c == '"' || c == '\'' || c == '=' || c == ',' ||
           c == '<' || c == '>' || c == ';';
  };
  while (std::getline(in, line)) {
    ++number;
    std::size_t start = 0;
    while (start < line.size()) {
      while (start < line.size() && is_separator(line[start])) ++start;
      std::size_t end = start;
      while (end < line.size() && !is_separator(line[end])) ++end;
      if (end > start) {
        const std::string token = line.substr(start, end - start);
        char* parsed_end = nullptr;
        const double value = std::strtod(token.c_str(), &parsed_end);
        if (parsed_end == token.c_str() + token.size() && !std::isfinite(value)) return number;
      }
      start = end;
    }
  }
  return 0;
}

void check_finite_coordinates(OpenBabel::OBMol& mol, const std::string& path) {
  int index = 0;
  FOR_ATOMS_OF_MOL(atom, mol) {
    ++index;
    const double x = atom->GetX(), y = atom->GetY(), z = atom->GetZ();
    if (std::isfinite(x) && std::isfinite(y) && std::isfinite(z)) continue;
    const int line = path.empty() ? 0 : first_line_with_non_finite_number(path);
    throw Error(
        fmt::format("atom {} ({}) has a non-finite coordinate ({}, {}, {}){}; expected finite numbers in Å",
                    index, OpenBabel::OBElements::GetSymbol(atom->GetAtomicNum()), x, y, z,
                    line > 0 ? fmt::format(" on line {} of '{}'", line, path) : std::string()));
  }
}

bool is_integer_line(const std::string& line) {
  std::istringstream fields(line);
  std::string first, extra;
  if (!(fields >> first) || (fields >> extra)) return false;
  return first.find_first_not_of("0123456789") == std::string::npos;
}

// Open Babel reads an XYZ structure as the number of atom lines its first line states
// and ignores what follows unless it is another structure; an atom count that is too
// small would silently drop atoms. Each structure must be followed by the end of the
// file or by the atom count of the next.
void check_xyz_atom_counts(const std::string& path) {
  std::ifstream in(path);
  std::vector<std::string> lines;
  for (std::string line; std::getline(in, line);) lines.push_back(line);
  const auto blank = [](const std::string& line) {
    return line.find_first_not_of(" \t\r") == std::string::npos;
  };
  std::size_t at = 0;
  while (at < lines.size()) {
    if (blank(lines[at])) {
      ++at;
      continue;
    }
    if (!is_integer_line(lines[at])) return;  // not a count line: Open Babel reports what is wrong
    const std::size_t count_line = at;
    const std::string digits = lines[at].substr(lines[at].find_first_not_of(" \t"));
    std::size_t count = 0;
    const auto parsed = std::from_chars(digits.data(), digits.data() + digits.size(), count);
    // A count beyond the file's lines (or beyond any integer) is Open Babel's to report.
    if (parsed.ec != std::errc() || count > lines.size()) return;
    at += 2 + count;  // count, title, atoms
    if (at > lines.size()) return;
    std::size_t next = at;
    while (next < lines.size() && blank(lines[next])) ++next;
    if (next < lines.size() && !is_integer_line(lines[next]))
      throw Error(fmt::format(
          "xyz file '{}': line {} gives {} atom(s), but line {} holds one more atom line ('{}'); expected "
          "the "
          "stated number of atom lines, then the end of the file or the atom count of the next structure",
          path, count_line + 1, count, next + 1, lines[next].substr(0, 60)));
    at = next;
  }
}

// Elements whose atoms with four neighbours are tetrahedral (or at least not planar):
// groups 13 to 16 of periods 2 to 4. Square-planar four-coordination (Pt, Pd, Xe, ...)
// lies outside this set.
bool four_neighbours_leave_the_plane(unsigned atomic_number) {
  switch (atomic_number) {
    case 5:
    case 6:
    case 7:
    case 8:
    case 13:
    case 14:
    case 15:
    case 16:
    case 31:
    case 32:
    case 33:
    case 34:
      return true;
    default:
      return false;
  }
}

// Largest distance (Å) of an atom from the best plane through all atoms.
double largest_distance_from_best_plane(OpenBabel::OBMol& mol) {
  Eigen::MatrixXd points(static_cast<Eigen::Index>(mol.NumAtoms()), 3);
  Eigen::Index row = 0;
  FOR_ATOMS_OF_MOL(atom, mol) points.row(row++) << atom->GetX(), atom->GetY(), atom->GetZ();
  const Eigen::RowVector3d centre = points.colwise().mean();
  const Eigen::MatrixXd centred = points.rowwise() - centre;
  const Eigen::JacobiSVD<Eigen::MatrixXd> svd(centred, Eigen::ComputeThinV);
  const Eigen::Vector3d normal = svd.matrixV().col(2);
  return (centred * normal).cwiseAbs().maxCoeff();
}

double largest_distance_from_centre(OpenBabel::OBMol& mol) {
  Eigen::Vector3d centre = Eigen::Vector3d::Zero();
  FOR_ATOMS_OF_MOL(atom, mol) centre += Eigen::Vector3d(atom->GetX(), atom->GetY(), atom->GetZ());
  centre /= static_cast<double>(mol.NumAtoms());
  double largest = 0.0;
  FOR_ATOMS_OF_MOL(atom, mol)
  largest = std::max(largest, (Eigen::Vector3d(atom->GetX(), atom->GetY(), atom->GetZ()) - centre).norm());
  return largest;
}

// Why the structure is a drawing rather than a 3-D structure; empty when it is 3-D.
std::string why_a_drawing(OpenBabel::OBMol& mol, double flat_tolerance) {
  if (mol.NumAtoms() > 1 && largest_distance_from_centre(mol) < flat_tolerance)
    return "the file gives no coordinates (every atom at one point)";
  if (mol.GetDimension() == 2) return "the file marks it as a 2-d drawing";
  if (mol.GetDimension() == 0) return "the file gives no coordinates";
  if (mol.NumAtoms() < 4 || largest_distance_from_best_plane(mol) > flat_tolerance) return {};
  int index = 0;
  FOR_ATOMS_OF_MOL(atom, mol) {
    ++index;
    const unsigned neighbours = atom->GetExplicitDegree() + atom->GetImplicitHCount();
    if (neighbours >= 4 && four_neighbours_leave_the_plane(atom->GetAtomicNum()))
      return fmt::format("every atom lies in one plane, although atom {} ({} with {} neighbours) cannot",
                         index, OpenBabel::OBElements::GetSymbol(atom->GetAtomicNum()), neighbours);
  }
  return {};
}

// Adds the hydrogens a structure leaves implicit and builds 3-D coordinates for a
// drawing (see IncompleteStructurePolicy).
void complete_structure(OpenBabel::OBMol& mol, const std::string& what, const ReadOptions& options,
                        ReadResult& result) {
  int implicit_hydrogens = 0;
  bool explicit_hydrogens = false;
  std::vector<int> atoms_short_of_hydrogens;
  int index = 0;
  FOR_ATOMS_OF_MOL(atom, mol) {
    ++index;
    implicit_hydrogens += static_cast<int>(atom->GetImplicitHCount());
    if (atom->GetImplicitHCount() > 0) atoms_short_of_hydrogens.push_back(index);
    if (atom->GetAtomicNum() == 1) explicit_hydrogens = true;
  }
  const std::string drawing = why_a_drawing(mol, options.flat_drawing_tolerance_angstrom);
  const bool add_hydrogens = implicit_hydrogens > 0 && (!explicit_hydrogens || !drawing.empty());
  if (drawing.empty() && !add_hydrogens) {
    // A 3-D structure with its hydrogens, where Open Babel still counts an atom short
    // of its usual valence: more often a formal charge left out of the file (a nitro
    // group written N(=O)O) than a missing hydrogen, so it is analysed as given.
    if (implicit_hydrogens > 0) {
      std::string atoms;
      for (const int atom : atoms_short_of_hydrogens)
        atoms += (atoms.empty() ? "" : ", ") + std::to_string(atom);
      result.warnings.push_back(fmt::format(
          "{}: atom(s) {} have fewer bonds than their usual valence (open babel would add {} hydrogen(s)); "
          "the file may leave out a formal charge or a hydrogen; analysed as given",
          what, atoms, implicit_hydrogens));
    }
    return;
  }
  std::string state = drawing;
  if (add_hydrogens)
    state += fmt::format("{}{} hydrogen atom(s) implicit", state.empty() ? "it leaves " : ", and it leaves ",
                         implicit_hydrogens);
  if (options.incomplete_structures == IncompleteStructurePolicy::refuse)
    throw Error(
        fmt::format("{} is not a complete 3-d structure: {}; the analysis needs every atom at a 3-d "
                    "position, and completing such structures was turned off (leave out --refuse-incomplete "
                    "to add the hydrogens and build 3-d coordinates)",
                    what, state));
  const int atoms_before = static_cast<int>(mol.NumAtoms());
  if (add_hydrogens) {
    mol.AddHydrogens();
    result.hydrogens_added = static_cast<int>(mol.NumAtoms()) - atoms_before;
  }
  if (!drawing.empty()) {
    build_three_dimensional(mol, what, result.warnings);
    result.geometry_built_from_drawing = true;
  }
  std::string done;
  if (result.hydrogens_added > 0)
    done = fmt::format("added {} hydrogen atom(s) (atoms {} to {})", result.hydrogens_added, atoms_before + 1,
                       mol.NumAtoms());
  if (result.geometry_built_from_drawing)
    done += std::string(done.empty() ? "" : " and ") + "built 3-d coordinates with open babel as for smiles";
  result.warnings.push_back(
      fmt::format("{}: {}; {}, then optimized on the chosen potential", what, state, done));
}

// built: the coordinates come from Open Babel's builder (SMILES or a completed drawing),
// so overlapping atoms mean the builder failed, not that the file is wrong.
void check_geometry(const Molecule& molecule, double minimum_distance, bool built) {
  for (std::size_t i = 0; i < molecule.atoms.size(); ++i)
    for (std::size_t j = i + 1; j < molecule.atoms.size(); ++j) {
      const double d = (molecule.atoms[i].position_angstrom - molecule.atoms[j].position_angstrom).norm();
      if (d >= minimum_distance) continue;
      if (built)
        throw Error(fmt::format(
            "open babel's builder could not build a 3-d structure of {} (it put atoms {} and {} {:.3f} Å "
            "apart; metal complexes, ions and several fragments are beyond it): give a 3-d file instead",
            molecule.formula(), i + 1, j + 1, d));
      throw Error(
          fmt::format("atoms {} and {} are {:.3f} Å apart, closer than the physical minimum {:.2f} Å "
                      "(overlapping atoms in the input?)",
                      i + 1, j + 1, d, minimum_distance));
    }
}

// Checks the structure as read, completes it when it is a drawing or leaves its
// hydrogens implicit, and converts it. what names the structure in messages.
ReadResult finish(OpenBabel::OBMol& mol, const std::string& source, const std::string& format_name,
                  const ReadOptions& options, bool from_smiles, std::vector<std::string> warnings,
                  const std::string& what) {
  ReadResult result;
  result.warnings = std::move(warnings);
  if (!from_smiles) {
    check_finite_coordinates(mol, source);
    complete_structure(mol, what, options, result);
  }
  result.molecule = molecule_from_openbabel(mol);
  result.molecule.source = source;
  result.format_used = format_name;
  result.geometry_built_from_smiles = from_smiles;
  check_geometry(result.molecule, options.minimum_interatomic_distance_angstrom,
                 from_smiles || result.geometry_built_from_drawing);
  apply_isotopes(result.molecule, options.isotopes);
  return result;
}

}  // namespace

IsotopeChoice parse_isotope_choice(const std::string& text) {
  // Parsed by hand rather than with a regular expression: std::regex matches
  // recursively and overflows the stack on very long input.
  const std::string shown =
      text.size() > max_isotope_choice_length ? text.substr(0, max_isotope_choice_length) + "..." : text;
  if (text.size() > max_isotope_choice_length)
    throw Error(
        fmt::format("isotope choice '{}' is longer than {} characters; expected N=A (atom number N, "
                    "mass number A), e.g. 2=2",
                    shown, max_isotope_choice_length));
  const auto malformed = [&] {
    return Error(
        fmt::format("isotope choice '{}' is not of the form N=A (atom number N, mass number A), "
                    "e.g. 2=2 for deuterium on atom 2",
                    shown));
  };
  const std::size_t equals = text.find('=');
  if (equals == std::string::npos || text.find('=', equals + 1) != std::string::npos) throw malformed();
  const auto parse_number = [&](std::string_view part) {
    const auto is_space = [](char c) { return c == ' ' || c == '\t'; };
    while (!part.empty() && is_space(part.front())) part.remove_prefix(1);
    while (!part.empty() && is_space(part.back())) part.remove_suffix(1);
    if (part.empty()) throw malformed();
    for (const char c : part)
      if (c < '0' || c > '9') throw malformed();
    int value = 0;
    const auto [end, code] = std::from_chars(part.data(), part.data() + part.size(), value);
    if (code != std::errc() || end != part.data() + part.size())
      throw Error(fmt::format("isotope choice '{}' has a number out of range", shown));
    return value;
  };
  const std::string_view whole(text);
  IsotopeChoice choice;
  choice.atom_number = parse_number(whole.substr(0, equals));
  choice.mass_number = parse_number(whole.substr(equals + 1));
  return choice;
}

void apply_isotopes(Molecule& molecule, const std::vector<IsotopeChoice>& isotopes) {
  for (std::size_t k = 0; k < isotopes.size(); ++k)
    for (std::size_t earlier = 0; earlier < k; ++earlier)
      if (isotopes[earlier].atom_number == isotopes[k].atom_number)
        throw Error(
            fmt::format("atom {} is given two isotope choices ({}={} and {}={}); expected one per atom",
                        isotopes[k].atom_number, isotopes[earlier].atom_number, isotopes[earlier].mass_number,
                        isotopes[k].atom_number, isotopes[k].mass_number));
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

std::vector<ReadResult> read_all_molecules(const std::string& path, const ReadOptions& options) {
  OpenBabelLogCapture messages;
  check_readable_file(path);
  OpenBabel::OBConversion conversion;
  std::string format_name;
  conversion.SetInFormat(choose_format(conversion, path, options, format_name));
  if (format_name == "xyz") check_xyz_atom_counts(path);
  std::ifstream stream(path);
  std::vector<ReadResult> results;
  OpenBabel::OBMol mol;
  bool first = true;
  while (first ? conversion.Read(&mol, &stream) : conversion.Read(&mol)) {
    first = false;
    if (mol.NumAtoms() == 0) break;
    const std::string what = fmt::format("structure {} of '{}'", results.size() + 1, path);
    try {
      results.push_back(finish(mol, path, format_name, options, false, {}, what));
    } catch (const Error& error) {
      if (std::string_view(error.what()).substr(0, what.size()) == what) throw;
      throw Error(fmt::format("{}: {}", what, error.what()));
    }
    mol.Clear();
  }
  if (results.empty()) {
    const std::string detail = messages.first_message();
    throw Error(fmt::format("no molecule could be read from '{}' as {}{}", path, format_name,
                            detail.empty() ? "" : " (open babel: " + detail + ")"));
  }
  return results;
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
    ReadResult result =
        finish(mol, "smiles:" + path_or_smiles, "smi", options, true, std::move(warnings), "the smiles");
    if (result.molecule.title.empty()) result.molecule.title = path_or_smiles;
    return result;
  }

  check_readable_file(path_or_smiles);
  std::string format_name;
  conversion.SetInFormat(choose_format(conversion, path_or_smiles, options, format_name));
  if (format_name == "xyz") check_xyz_atom_counts(path_or_smiles);
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
  const std::string what =
      options.structure_index > 0
          ? fmt::format("structure {} of '{}'", options.structure_index + 1, path_or_smiles)
          : fmt::format("'{}'", path_or_smiles);
  ReadResult result = finish(mol, path_or_smiles, format_name, options, false, {}, what);
  if (result.molecule.title.empty())
    result.molecule.title = std::filesystem::path(path_or_smiles).stem().string();
  return result;
}

}  // namespace overtone
