#include "potential/taylor_expansion_potential.hpp"

#include <fmt/format.h>
#include <toml++/toml.h>

#include <algorithm>
#include <cctype>
#include <cmath>
#include <fstream>
#include <map>
#include <set>
#include <sstream>

#include "core/error.hpp"
#include "core/option_checks.hpp"
#include "core/text.hpp"
#include "core/units.hpp"
#include "potential/detail_toml_text.hpp"
#include "potential/file_limits.hpp"

namespace overtone {

namespace {

constexpr const char* format_name = "overtone-taylor-expansion";
constexpr int format_version = 1;

double energy_factor(const std::string& unit, const std::string& where) {
  if (unit == "hartree") return units::kcal_mol_per_hartree;
  if (unit == "kcal/mol") return 1.0;
  if (unit == "kJ/mol") return units::kcal_mol_per_kj_mol;
  if (unit == "aJ") return units::kcal_mol_per_attojoule;
  if (unit == "cm-1") return units::kcal_mol_per_cm1;
  throw Error(
      fmt::format("{}: energy unit '{}' is not one of hartree, kcal/mol, kJ/mol, aJ, cm-1", where, unit));
}

double length_factor(const std::string& unit, const std::string& where) {
  if (unit == "angstrom") return 1.0;
  if (unit == "bohr") return units::angstrom_per_bohr;
  throw Error(fmt::format("{}: length unit '{}' is not one of angstrom, bohr", where, unit));
}

int atomic_number_of(const std::string& symbol, const std::string& where) {
  for (int z = 1; z <= 118; ++z) {
    const std::string known = element_symbol(z);
    if (known.size() != symbol.size()) continue;
    bool same = true;
    for (std::size_t c = 0; c < known.size(); ++c)
      same = same && std::tolower(static_cast<unsigned char>(known[c])) ==
                         std::tolower(static_cast<unsigned char>(symbol[c]));
    if (same) return z;
  }
  throw Error(fmt::format("{}: unknown element symbol '{}'", where, symbol));
}

// Rigid-body motions in mass-weighted space at a geometry (3N × up to 6, orthonormal).
Eigen::MatrixXd rigid_body_vectors(const Eigen::VectorXd& x, const Eigen::VectorXd& masses) {
  const Eigen::Index atoms = masses.size();
  Eigen::Vector3d center = Eigen::Vector3d::Zero();
  for (Eigen::Index a = 0; a < atoms; ++a) center += masses[a] * x.segment<3>(3 * a);
  center /= masses.sum();
  Eigen::MatrixXd vectors(3 * atoms, 6);
  for (int axis = 0; axis < 3; ++axis) {
    vectors.col(axis).setZero();
    vectors.col(3 + axis).setZero();
    for (Eigen::Index a = 0; a < atoms; ++a) {
      vectors(3 * a + axis, axis) = std::sqrt(masses[a]);
      vectors.block(3 * a, 3 + axis, 3, 1) =
          std::sqrt(masses[a]) * Eigen::Vector3d::Unit(axis).cross(x.segment<3>(3 * a) - center);
    }
  }
  // Orthonormal basis of their span (a linear molecule has only two rotations).
  const Eigen::JacobiSVD<Eigen::MatrixXd> svd(vectors, Eigen::ComputeThinU);
  const double largest = svd.singularValues()[0];
  Eigen::Index rank = 0;
  while (rank < svd.singularValues().size() && svd.singularValues()[rank] > 1e-8 * largest) ++rank;
  return svd.matrixU().leftCols(rank);
}

std::string key_of(const std::vector<int>& indices) {
  std::vector<int> sorted = indices;
  std::sort(sorted.begin(), sorted.end());
  std::string key;
  for (int i : sorted) key += std::to_string(i) + ",";
  return key;
}

// --- TOML reading helpers ------------------------------------------------------------

struct Reader {
  const toml::table& root;
  std::string origin;

  [[noreturn]] void fail(const std::string& key, const std::string& what) const {
    throw Error(fmt::format("{}: key '{}' {}", origin, key, what));
  }
  std::string string_at(const std::string& key, const toml::node_view<const toml::node>& node) const {
    const auto value = node.value<std::string>();
    if (!value) fail(key, "must be a string");
    return *value;
  }
  double number(const std::string& key, const toml::node& node) const {
    if (const auto v = node.value<double>()) {
      if (!std::isfinite(*v)) fail(key, "must be a finite number");
      return *v;
    }
    fail(key, "must be a number");
  }
  // value (internal units) must satisfy |value| ≤ limit (file_limits.hpp).
  double bounded(const std::string& key, double value, double limit, const char* unit) const {
    if (std::abs(value) > limit)
      fail(key, fmt::format("has {:.6g} {} after conversion, beyond the largest magnitude this program "
                            "accepts, {:g} {} (docs/taylor-expansion-format.md, Limits)",
                            value, unit, limit, unit));
    return value;
  }
  const toml::array& array(const std::string& key, const toml::node_view<const toml::node>& node) const {
    const toml::array* a = node.as_array();
    if (!a) fail(key, "must be an array");
    return *a;
  }
};

using View = toml::node_view<const toml::node>;

toml::table parse_toml(const std::string& toml_text, const std::string& origin) {
  const std::string context = fmt::format("taylor-expansion file '{}'", origin);
  detail::check_toml_text(toml_text, context);
  try {
    return toml::parse(toml_text, origin);
  } catch (const toml::parse_error& e) {
    throw Error(
        fmt::format("{} line {}: malformed TOML: {}", context, e.source().begin.line, e.description()));
  }
}

// The format and version keys, then the title, source and coordinate kind.
void read_header(const Reader& r, const View& top, TaylorExpansionData& data) {
  const std::string& origin = r.origin;
  const auto format = top["format"].value<std::string>();
  if (!format || *format != format_name)
    throw Error(fmt::format("{}: key 'format' must be \"{}\", got {}", origin, format_name,
                            format ? "\"" + *format + "\"" : std::string("nothing")));
  const auto version = top["version"].value<int64_t>();
  if (!version || *version != format_version)
    throw Error(fmt::format("{}: key 'version' must be {}, got {}", origin, format_version,
                            version ? std::to_string(*version) : std::string("nothing")));
  data.title = top["title"].value_or(std::string());
  data.source = top["source"].value_or(std::string());
  const std::string coordinates = r.string_at("coordinates", top["coordinates"]);
  if (coordinates == "cartesian")
    data.coordinates = ExpansionCoordinates::cartesian;
  else if (coordinates == "normal")
    data.coordinates = ExpansionCoordinates::normal;
  else
    r.fail("coordinates", "must be \"cartesian\" or \"normal\", got \"" + coordinates + "\"");
}

// Elements, positions, optional masses and reference energy of [reference].
void read_reference(const Reader& r, const View& reference, double to_angstrom, double to_kcal,
                    TaylorExpansionData& data) {
  const std::string& origin = r.origin;
  const toml::array& elements = r.array("reference.elements", reference["elements"]);
  for (const auto& e : elements) {
    const auto symbol = e.value<std::string>();
    if (!symbol) r.fail("reference.elements", "must hold element symbols (strings)");
    data.atomic_numbers.push_back(atomic_number_of(*symbol, origin + ": key 'reference.elements'"));
  }
  const int atoms = static_cast<int>(data.atomic_numbers.size());
  if (atoms < 1) r.fail("reference.elements", "is empty");
  const toml::array& positions = r.array("reference.positions", reference["positions"]);
  if (static_cast<int>(positions.size()) != atoms)
    r.fail("reference.positions",
           fmt::format("has {} rows, expected one [x, y, z] per element ({})", positions.size(), atoms));
  data.reference_angstrom.resize(3 * atoms);
  for (int a = 0; a < atoms; ++a) {
    const toml::array* row = positions[static_cast<std::size_t>(a)].as_array();
    if (!row || row->size() != 3)
      r.fail("reference.positions", fmt::format("row {} must be [x, y, z]", a + 1));
    for (int c = 0; c < 3; ++c)
      data.reference_angstrom[3 * a + c] =
          r.bounded("reference.positions",
                    r.number("reference.positions", *row->get(static_cast<std::size_t>(c))) * to_angstrom,
                    file_limits::position_angstrom, "Å");
  }
  if (const toml::array* masses = reference["masses_da"].as_array()) {
    if (static_cast<int>(masses->size()) != atoms)
      r.fail("reference.masses_da", fmt::format("has {} entries, expected {}", masses->size(), atoms));
    data.masses_da.resize(atoms);
    for (int a = 0; a < atoms; ++a) {
      data.masses_da[a] = r.number("reference.masses_da", *masses->get(static_cast<std::size_t>(a)));
      if (!(data.masses_da[a] > 0.0))
        r.fail("reference.masses_da", fmt::format("entry {} must be positive", a + 1));
      r.bounded("reference.masses_da", data.masses_da[a], file_limits::mass_da, "Da");
    }
  }
  if (const toml::node* energy = reference["energy"].node())
    data.reference_energy_kcal_mol =
        r.bounded("reference.energy", r.number("reference.energy", *energy) * to_kcal,
                  file_limits::reference_energy_kcal_mol, "kcal/mol");
}

// The lists of derivatives of the file ([indices..., value] rows), each index set at most
// once over all lists.
class DerivativeLists {
 public:
  DerivativeLists(const Reader& r, TaylorExpansionData& data) : r_(r), data_(data) {}

  // The list under `key` (absent: nothing) of derivatives of the given order in variables
  // 1..variable_count, values multiplied by scale.
  void read(const std::string& key, const View& node, int order, int variable_count, double scale) {
    if (!node) return;
    for (const auto& entry : r_.array(key, node)) {
      const toml::array* row = entry.as_array();
      if (!row || static_cast<int>(row->size()) != order + 1)
        r_.fail(key, fmt::format("entries must be [{} indices, value]", order));
      ExpansionDerivative d;
      for (int k = 0; k < order; ++k) {
        const auto index = row->get(static_cast<std::size_t>(k))->value<int64_t>();
        if (!index || *index < 1 || *index > variable_count)
          r_.fail(key, fmt::format("has an index outside 1..{}", variable_count));
        d.indices.push_back(static_cast<int>(*index) - 1);
      }
      d.value = r_.number(key, *row->get(static_cast<std::size_t>(order))) * scale;
      if (!std::isfinite(d.value)) r_.fail(key, "has a non-finite value");
      r_.bounded(key, d.value, file_limits::force_constant_kcal_mol, "kcal/mol per unit^n");
      if (!seen_.insert(key_of(d.indices)).second) {
        std::string listed;
        for (int i : d.indices) listed += std::to_string(i + 1) + " ";
        r_.fail(key, "lists the derivative with indices " + listed + "twice (in some index order)");
      }
      std::sort(d.indices.begin(), d.indices.end());
      data_.derivatives.push_back(std::move(d));
    }
  }

 private:
  const Reader& r_;
  TaylorExpansionData& data_;
  std::set<std::string> seen_;
};

void read_cartesian_section(const Reader& r, const View& top, double to_kcal, double to_angstrom,
                            TaylorExpansionData& data) {
  const auto table = top["cartesian"];
  if (!table || !table.as_table()) r.fail("cartesian", "must be a table for coordinates = \"cartesian\"");
  const int n = 3 * static_cast<int>(data.atomic_numbers.size());
  DerivativeLists lists(r, data);
  lists.read("cartesian.first", table["first"], 1, n, to_kcal / to_angstrom);
  lists.read("cartesian.second", table["second"], 2, n, to_kcal / std::pow(to_angstrom, 2));
  lists.read("cartesian.third", table["third"], 3, n, to_kcal / std::pow(to_angstrom, 3));
  lists.read("cartesian.fourth", table["fourth"], 4, n, to_kcal / std::pow(to_angstrom, 4));
  if (!table["second"]) r.fail("cartesian.second", "is missing: the expansion needs its second derivatives");
}

// One [[normal.modes]] table: its frequency and displacement pattern (column k).
void read_normal_mode(const Reader& r, const toml::table* mode, int k, TaylorExpansionData& data) {
  const int atoms = static_cast<int>(data.atomic_numbers.size());
  const std::string key = fmt::format("normal.modes[{}]", k + 1);
  if (!mode) r.fail(key, "must be a table");
  const View view{*mode};
  const auto frequency = view["frequency_cm1"].value<double>();
  if (!frequency || !(*frequency > 0.0)) r.fail(key + ".frequency_cm1", "must be a positive number");
  data.frequencies_cm1[k] =
      r.bounded(key + ".frequency_cm1", *frequency, file_limits::wavenumber_cm1, "cm-1");
  const toml::array& displacement = r.array(key + ".displacement", view["displacement"]);
  if (static_cast<int>(displacement.size()) != atoms)
    r.fail(key + ".displacement", fmt::format("must have one [dx, dy, dz] per atom ({})", atoms));
  for (int a = 0; a < atoms; ++a) {
    const toml::array* row = displacement[static_cast<std::size_t>(a)].as_array();
    if (!row || row->size() != 3)
      r.fail(key + ".displacement", fmt::format("row {} must be [dx, dy, dz]", a + 1));
    for (int c = 0; c < 3; ++c)
      data.mode_displacements(3 * a + c, k) = r.bounded(
          key + ".displacement", r.number(key + ".displacement", *row->get(static_cast<std::size_t>(c))),
          file_limits::displacement_entry, "(pattern units)");
  }
  if (data.mode_displacements.col(k).norm() == 0.0) r.fail(key + ".displacement", "is zero");
}

void read_normal_section(const Reader& r, const View& top, double to_kcal, TaylorExpansionData& data) {
  const int atoms = static_cast<int>(data.atomic_numbers.size());
  if (data.masses_da.size() == 0) r.fail("reference.masses_da", "is required for coordinates = \"normal\"");
  const auto table = top["normal"];
  if (!table || !table.as_table()) r.fail("normal", "must be a table for coordinates = \"normal\"");
  const toml::array* modes = table["modes"].as_array();
  if (!modes || modes->empty()) r.fail("normal.modes", "must list the modes ([[normal.modes]] tables)");
  const int m = static_cast<int>(modes->size());
  data.frequencies_cm1.resize(m);
  data.mode_displacements.resize(3 * atoms, m);
  for (int k = 0; k < m; ++k)
    read_normal_mode(r, modes->get(static_cast<std::size_t>(k))->as_table(), k, data);
  DerivativeLists lists(r, data);
  lists.read("normal.cubic", table["cubic"], 3, m, to_kcal);
  lists.read("normal.quartic", table["quartic"], 4, m, to_kcal);
}

void check_same_atoms(const TaylorExpansionData& data, const Molecule& molecule, const std::string& name) {
  const int atoms = static_cast<int>(data.atomic_numbers.size());
  if (data.reference_angstrom.size() != 3 * atoms)
    throw Error(fmt::format("{}: reference geometry has {} coordinates, expected {}", name,
                            data.reference_angstrom.size(), 3 * atoms));
  if (static_cast<int>(molecule.atom_count()) != atoms)
    throw Error(
        fmt::format("{} is for {} atoms but the molecule has {}", name, atoms, molecule.atom_count()));
  for (int a = 0; a < atoms; ++a)
    if (molecule.atoms[static_cast<std::size_t>(a)].atomic_number !=
        data.atomic_numbers[static_cast<std::size_t>(a)])
      throw Error(fmt::format(
          "{}: atom {} is {} in the expansion but {} in the molecule (atoms must come in the same order)",
          name, a + 1, element_symbol(data.atomic_numbers[static_cast<std::size_t>(a)]),
          element_symbol(molecule.atoms[static_cast<std::size_t>(a)].atomic_number)));
}

// The fixed map x ↦ rigid·x + shift from the molecule's frame to displacements from the
// file's reference geometry.
struct Superposition {
  Eigen::MatrixXd rigid;
  Eigen::VectorXd shift;
};

// Superposition of the molecule's frame onto the file's (mass-weighted Kabsch); throws
// when an atom stays farther than the tolerance from its reference position.
Superposition superpose(const TaylorExpansionData& data, const Molecule& molecule, double tolerance_angstrom,
                        const std::string& name) {
  const int atoms = static_cast<int>(data.atomic_numbers.size());
  const Eigen::VectorXd weights = molecule.masses();
  const Eigen::VectorXd x_molecule = molecule.coordinates();
  Eigen::Vector3d c_molecule = Eigen::Vector3d::Zero(), c_reference = Eigen::Vector3d::Zero();
  for (int a = 0; a < atoms; ++a) {
    c_molecule += weights[a] * x_molecule.segment<3>(3 * a);
    c_reference += weights[a] * data.reference_angstrom.segment<3>(3 * a);
  }
  c_molecule /= weights.sum();
  c_reference /= weights.sum();
  Eigen::Matrix3d covariance = Eigen::Matrix3d::Zero();
  for (int a = 0; a < atoms; ++a)
    covariance += weights[a] * (data.reference_angstrom.segment<3>(3 * a) - c_reference) *
                  (x_molecule.segment<3>(3 * a) - c_molecule).transpose();
  const Eigen::JacobiSVD<Eigen::Matrix3d> svd(covariance, Eigen::ComputeFullU | Eigen::ComputeFullV);
  Eigen::Matrix3d correction = Eigen::Matrix3d::Identity();
  correction(2, 2) = (svd.matrixU() * svd.matrixV().transpose()).determinant() < 0.0 ? -1.0 : 1.0;
  const Eigen::Matrix3d rotation = svd.matrixU() * correction * svd.matrixV().transpose();
  double worst = 0.0;
  int worst_atom = 0;
  for (int a = 0; a < atoms; ++a) {
    const double d = (rotation * (x_molecule.segment<3>(3 * a) - c_molecule) + c_reference -
                      data.reference_angstrom.segment<3>(3 * a))
                         .norm();
    if (d > worst) {
      worst = d;
      worst_atom = a;
    }
  }
  if (worst > tolerance_angstrom)
    throw Error(
        fmt::format("{}: the molecule does not match the expansion's reference geometry: after superposition "
                    "atom {} is {:.3f} Å away (limit {} Å)",
                    name, worst_atom + 1, worst, tolerance_angstrom));
  Superposition superposition{Eigen::MatrixXd::Zero(3 * atoms, 3 * atoms), Eigen::VectorXd(3 * atoms)};
  for (int a = 0; a < atoms; ++a) {
    superposition.rigid.block<3, 3>(3 * a, 3 * a) = rotation;
    superposition.shift.segment<3>(3 * a) =
        c_reference - rotation * c_molecule - data.reference_angstrom.segment<3>(3 * a);
  }
  return superposition;
}

// Cartesian expansion variables: the displacements themselves.
Eigen::MatrixXd cartesian_variables(const std::vector<ExpansionDerivative>& derivatives, int atoms,
                                    const std::string& name) {
  for (const auto& d : derivatives)
    for (int i : d.indices)
      if (i < 0 || i >= 3 * atoms)
        throw Error(fmt::format("{}: a cartesian derivative index lies outside 1..{}", name, 3 * atoms));
  return Eigen::MatrixXd::Identity(3 * atoms, 3 * atoms);
}

// Dimensionless normal coordinates from the file's modes (mass-weighted, made orthonormal
// by Löwdin's nearest set once they pass the orthogonality test); adds the harmonic terms
// ω_k q_k²/2 to the derivatives.
Eigen::MatrixXd normal_variables(const TaylorExpansionData& data, double orthogonality_tolerance,
                                 const std::string& name, std::vector<ExpansionDerivative>& derivatives) {
  const int atoms = static_cast<int>(data.atomic_numbers.size());
  const int m = static_cast<int>(data.frequencies_cm1.size());
  if (data.masses_da.size() != atoms)
    throw Error(fmt::format("{}: normal coordinates need one mass per atom", name));
  if (data.mode_displacements.rows() != 3 * atoms || data.mode_displacements.cols() != m)
    throw Error(fmt::format("{}: mode displacements are {}x{}, expected {}x{}", name,
                            data.mode_displacements.rows(), data.mode_displacements.cols(), 3 * atoms, m));
  Eigen::VectorXd sqrt_mass(3 * atoms);
  for (int r = 0; r < 3 * atoms; ++r) sqrt_mass[r] = std::sqrt(data.masses_da[r / 3]);
  Eigen::MatrixXd l = sqrt_mass.asDiagonal() * data.mode_displacements;
  for (int k = 0; k < m; ++k) l.col(k).normalize();
  const double rigid_overlap =
      (rigid_body_vectors(data.reference_angstrom, data.masses_da).transpose() * l).cwiseAbs().maxCoeff();
  const Eigen::MatrixXd gram = l.transpose() * l;
  const double gram_error = (gram - Eigen::MatrixXd::Identity(m, m)).cwiseAbs().maxCoeff();
  if (rigid_overlap > orthogonality_tolerance || gram_error > orthogonality_tolerance)
    throw Error(
        fmt::format("{}: the mode vectors (mass-weighted) are not orthonormal vibrations: overlap with "
                    "translations/rotations {:.2g}, with each other {:.2g} (limit {})",
                    name, rigid_overlap, gram_error, orthogonality_tolerance));
  const Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> gram_solver(gram);
  l = l * gram_solver.operatorInverseSqrt();  // Löwdin: the nearest orthonormal set
  Eigen::MatrixXd to_variables(m, 3 * atoms);
  for (int k = 0; k < m; ++k) {
    const double omega = data.frequencies_cm1[k] / units::cm1_per_internal_angular_frequency;
    to_variables.row(k) =
        std::sqrt(omega / units::hbar_internal) * (sqrt_mass.asDiagonal() * l.col(k)).transpose();
  }
  for (const auto& d : derivatives) {
    if (d.indices.size() < 3)
      throw Error(
          fmt::format("{}: a normal-coordinate expansion lists only cubic and quartic constants", name));
    for (int i : d.indices)
      if (i < 0 || i >= m) throw Error(fmt::format("{}: a mode index lies outside 1..{}", name, m));
  }
  for (int k = 0; k < m; ++k)
    derivatives.push_back({{k, k}, data.frequencies_cm1[k] * units::kcal_mol_per_cm1});
  return to_variables;
}

}  // namespace

// ---------------------------------------------------------------------------------------
// Reading

TaylorExpansionData parse_taylor_expansion(const std::string& toml_text, const std::string& origin) {
  const toml::table root = parse_toml(toml_text, origin);
  const Reader r{root, origin};
  const View top{root};
  TaylorExpansionData data;
  read_header(r, top, data);
  const double to_kcal =
      energy_factor(r.string_at("units.energy", top["units"]["energy"]), origin + ": key 'units.energy'");
  const double to_angstrom = length_factor(top["units"]["length"].value_or(std::string("angstrom")),
                                           origin + ": key 'units.length'");
  read_reference(r, top["reference"], to_angstrom, to_kcal, data);
  if (data.coordinates == ExpansionCoordinates::cartesian)
    read_cartesian_section(r, top, to_kcal, to_angstrom, data);
  else
    read_normal_section(r, top, to_kcal, data);
  return data;
}

TaylorExpansionData read_taylor_expansion(const std::string& path) {
  std::ifstream in(path);
  if (!in) throw Error(fmt::format("cannot open the taylor-expansion file '{}'", path));
  std::stringstream text;
  text << in.rdbuf();
  if (text.str().empty()) throw Error(fmt::format("the taylor-expansion file '{}' is empty", path));
  return parse_taylor_expansion(text.str(), path);
}

bool is_taylor_expansion_file(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) return false;
  std::stringstream text;
  text << in.rdbuf();
  // From the text itself, so that a malformed file of this kind is still recognized (and
  // its error names this format) and no unchecked text reaches the TOML library.
  return detail::potential_file_kind(text.str()) == detail::PotentialFileKind::taylor_expansion;
}

std::unique_ptr<Potential> load_taylor_expansion_potential(const std::string& path,
                                                           const Molecule& molecule) {
  return load_taylor_expansion_potential(path, molecule, TaylorExpansionOptions{});
}

std::unique_ptr<Potential> load_taylor_expansion_potential(const std::string& path, const Molecule& molecule,
                                                           const TaylorExpansionOptions& options) {
  return std::make_unique<TaylorExpansionPotential>(read_taylor_expansion(path), molecule, options);
}

// ---------------------------------------------------------------------------------------
// The potential

TaylorExpansionPotential::TaylorExpansionPotential(TaylorExpansionData data, const Molecule& molecule,
                                                   const TaylorExpansionOptions& options)
    : data_(std::move(data)), options_(options) {
  options_.validate();
  const int atoms = static_cast<int>(data_.atomic_numbers.size());
  const std::string name = description();
  check_same_atoms(data_, molecule, name);
  const Superposition superposition =
      superpose(data_, molecule, options_.superposition_tolerance_angstrom, name);

  std::vector<ExpansionDerivative> derivatives = data_.derivatives;
  const Eigen::MatrixXd to_variables =
      data_.coordinates == ExpansionCoordinates::cartesian
          ? cartesian_variables(derivatives, atoms, name)
          : normal_variables(data_, options_.mode_orthogonality_tolerance, name, derivatives);
  transform_ = to_variables * superposition.rigid;
  offset_ = to_variables * superposition.shift;

  for (const auto& d : derivatives) {
    if (d.indices.empty() || d.indices.size() > 4)
      throw Error(
          fmt::format("{}: derivatives must be of order 1 to 4, got order {}", name, d.indices.size()));
    std::map<int, int> powers;
    for (int i : d.indices) ++powers[i];
    Term t{{}, d.value};
    for (const auto& [variable, power] : powers) {
      t.factors.emplace_back(variable, power);
      for (int f = 2; f <= power; ++f) t.coefficient /= f;
    }
    terms_.push_back(std::move(t));
  }

  // Estimated minimum from the first and second derivatives at the reference.
  const Eigen::Index n = to_variables.rows();
  Eigen::VectorXd g0 = Eigen::VectorXd::Zero(n);
  Eigen::MatrixXd h0 = Eigen::MatrixXd::Zero(n, n);
  evaluate(Eigen::VectorXd::Zero(n), &g0, &h0);
  const Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> solver(h0);
  const double largest = solver.eigenvalues().cwiseAbs().maxCoeff();
  double lowering = 0.0;
  for (Eigen::Index k = 0; k < n; ++k) {
    const double lambda = solver.eigenvalues()[k];
    if (lambda > 1e-8 * largest) lowering += 0.5 * std::pow(solver.eigenvectors().col(k).dot(g0), 2) / lambda;
  }
  hole_threshold_ =
      data_.reference_energy_kcal_mol - lowering - options_.hole_depth_cm1 * units::kcal_mol_per_cm1;
}

std::string TaylorExpansionPotential::description() const {
  return data_.title.empty() ? std::string("Taylor expansion") : "Taylor expansion '" + data_.title + "'";
}

Eigen::VectorXd TaylorExpansionPotential::reference_in_molecule_frame() const {
  // Solve transform_·x + offset_ = 0 in the least-squares sense (exact for the Cartesian form).
  return transform_.completeOrthogonalDecomposition().solve(-offset_);
}

double TaylorExpansionPotential::evaluate(const Eigen::VectorXd& u, Eigen::VectorXd* gradient,
                                          Eigen::MatrixXd* hessian) const {
  double energy = data_.reference_energy_kcal_mol;
  auto power = [](double base, int exponent) {
    double p = 1.0;
    for (int e = 0; e < exponent; ++e) p *= base;
    return p;
  };
  for (const auto& t : terms_) {
    const std::size_t f = t.factors.size();
    double value = t.coefficient;
    for (const auto& [i, p] : t.factors) value *= power(u[i], p);
    energy += value;
    if (!gradient) continue;
    for (std::size_t a = 0; a < f; ++a) {
      const auto [ia, pa] = t.factors[a];
      double da = t.coefficient * pa * power(u[ia], pa - 1);
      for (std::size_t b = 0; b < f; ++b)
        if (b != a) da *= power(u[t.factors[b].first], t.factors[b].second);
      (*gradient)[ia] += da;
      if (!hessian) continue;
      for (std::size_t b = 0; b < f; ++b) {
        const auto [ib, pb] = t.factors[b];
        double dab;
        if (b == a) {
          if (pa < 2) continue;
          dab = t.coefficient * pa * (pa - 1) * power(u[ia], pa - 2);
        } else {
          dab = t.coefficient * pa * power(u[ia], pa - 1) * pb * power(u[ib], pb - 1);
        }
        for (std::size_t c = 0; c < f; ++c)
          if (c != a && c != b) dab *= power(u[t.factors[c].first], t.factors[c].second);
        (*hessian)(ia, ib) += dab;
      }
    }
  }
  return energy;
}

void TaylorExpansionPotential::guard(double energy, const Eigen::VectorXd& x) const {
  if (!options_.guard_holes || energy >= hole_threshold_) return;
  const Eigen::VectorXd displacement = x - reference_in_molecule_frame();
  double largest = 0.0;
  for (Eigen::Index a = 0; a < displacement.size() / 3; ++a)
    largest = std::max(largest, displacement.segment<3>(3 * a).norm());
  throw Error(fmt::format(
      "{} fell {:.0f} cm-1 below its minimum at a geometry where an atom has moved {:.3f} Å from the "
      "reference: "
      "the quartic surface has turned over (a hole) and results there would be meaningless; stay at smaller "
      "amplitude or energy",
      description(), (hole_threshold_ - energy) * units::cm1_per_kcal_mol + options_.hole_depth_cm1,
      largest));
}

double TaylorExpansionPotential::compute_energy(const Eigen::VectorXd& x) const {
  const double energy = evaluate(variables(x), nullptr, nullptr);
  guard(energy, x);
  return energy;
}

double TaylorExpansionPotential::compute_energy_and_gradient(const Eigen::VectorXd& x,
                                                             Eigen::VectorXd& gradient) const {
  Eigen::VectorXd g = Eigen::VectorXd::Zero(transform_.rows());
  const double energy = evaluate(variables(x), &g, nullptr);
  guard(energy, x);
  gradient = transform_.transpose() * g;
  return energy;
}

Eigen::MatrixXd TaylorExpansionPotential::compute_hessian(const Eigen::VectorXd& x) const {
  const Eigen::Index n = transform_.rows();
  Eigen::VectorXd g = Eigen::VectorXd::Zero(n);
  Eigen::MatrixXd h = Eigen::MatrixXd::Zero(n, n);
  const double energy = evaluate(variables(x), &g, &h);
  guard(energy, x);
  return transform_.transpose() * h * transform_;
}

// ---------------------------------------------------------------------------------------
// Writing

void TaylorExpansionOptions::validate() const {
  option_checks::require_positive("taylor-expansion", "hole_depth_cm1", hole_depth_cm1);
  option_checks::require_positive("taylor-expansion", "superposition_tolerance_angstrom",
                                  superposition_tolerance_angstrom);
  option_checks::require_positive("taylor-expansion", "mode_orthogonality_tolerance",
                                  mode_orthogonality_tolerance);
}

void TaylorWriteOptions::validate() const {
  energy_factor(energy_unit, "taylor-expansion writer");
  length_factor(length_unit, "taylor-expansion writer");
  option_checks::require_non_negative("taylor-expansion writer", "relative_threshold", relative_threshold);
}

std::string write_taylor_expansion(const TaylorExpansionData& data, const TaylorWriteOptions& options) {
  options.validate();
  const double to_kcal = energy_factor(options.energy_unit, "taylor-expansion writer");
  const double to_angstrom = length_factor(options.length_unit, "taylor-expansion writer");
  const int atoms = static_cast<int>(data.atomic_numbers.size());
  const bool normal = data.coordinates == ExpansionCoordinates::normal;
  auto number = [](double v) { return fmt::format("{:.17g}", v); };
  // Titles and sources come from input files: any bytes, escaped so that they read back.
  auto quoted = [](const std::string& s) { return toml_quoted(s); };

  std::string out;
  out += "# Taylor expansion of a potential energy surface to fourth order, for Overtone.\n";
  out += "# Format: docs/taylor-expansion-format.md. Every value is a derivative of the energy;\n";
  out +=
      normal
          ? "# here with respect to dimensionless normal coordinates q (cubic: phi_ijk, quartic: phi_ijkl).\n"
          : "# here with respect to Cartesian coordinates (index 3*(atom-1) + axis, axis x=1, y=2, z=3).\n";
  out += fmt::format("format = {}\nversion = {}\n", quoted(format_name), format_version);
  if (!data.title.empty()) out += "title = " + quoted(data.title) + "\n";
  if (!data.source.empty()) out += "source = " + quoted(data.source) + "\n";
  out += fmt::format("coordinates = {}\n\n", quoted(normal ? "normal" : "cartesian"));
  out += fmt::format("[units]\nenergy = {}\nlength = {}\n\n", quoted(options.energy_unit),
                     quoted(options.length_unit));

  out += "[reference]\nelements = [";
  for (int a = 0; a < atoms; ++a)
    out += (a ? ", " : "") + quoted(element_symbol(data.atomic_numbers[static_cast<std::size_t>(a)]));
  out += "]\n";
  if (data.masses_da.size() == atoms) {
    out += "masses_da = [";
    for (int a = 0; a < atoms; ++a) out += (a ? ", " : "") + number(data.masses_da[a]);
    out += "]\n";
  }
  out += "positions = [\n";
  for (int a = 0; a < atoms; ++a)
    out += fmt::format("  [{}, {}, {}],\n", number(data.reference_angstrom[3 * a] / to_angstrom),
                       number(data.reference_angstrom[3 * a + 1] / to_angstrom),
                       number(data.reference_angstrom[3 * a + 2] / to_angstrom));
  out += "]\n";
  out += "energy = " + number(data.reference_energy_kcal_mol / to_kcal) + "\n\n";

  auto write_list = [&](const std::string& key, int order, double scale) {
    std::vector<const ExpansionDerivative*> selected;
    double largest = 0.0;
    for (const auto& d : data.derivatives)
      if (static_cast<int>(d.indices.size()) == order) {
        selected.push_back(&d);
        largest = std::max(largest, std::abs(d.value));
      }
    std::string list = key + " = [\n";
    std::size_t written = 0;
    for (const auto* d : selected) {
      if (std::abs(d->value) <= options.relative_threshold * largest || d->value == 0.0) continue;
      list += "  [";
      std::vector<int> sorted = d->indices;
      std::sort(sorted.begin(), sorted.end());
      for (int i : sorted) list += std::to_string(i + 1) + ", ";
      list += number(d->value * scale) + "],\n";
      ++written;
    }
    list += "]\n";
    if (written > 0 || order == 2) out += list;
  };

  if (normal) {
    const int m = static_cast<int>(data.frequencies_cm1.size());
    out += "[normal]\n";
    for (const auto& d : data.derivatives)
      if (d.indices.size() < 3)
        throw Error("a normal-coordinate expansion holds only cubic and quartic derivatives");
    write_list("cubic", 3, 1.0 / to_kcal);
    write_list("quartic", 4, 1.0 / to_kcal);
    for (int k = 0; k < m; ++k) {
      out += fmt::format("\n[[normal.modes]]\nfrequency_cm1 = {}\ndisplacement = [\n",
                         number(data.frequencies_cm1[k]));
      for (int a = 0; a < atoms; ++a)
        out += fmt::format("  [{}, {}, {}],\n", number(data.mode_displacements(3 * a, k)),
                           number(data.mode_displacements(3 * a + 1, k)),
                           number(data.mode_displacements(3 * a + 2, k)));
      out += "]\n";
    }
  } else {
    out += "[cartesian]\n";
    write_list("first", 1, to_angstrom / to_kcal);
    write_list("second", 2, std::pow(to_angstrom, 2) / to_kcal);
    write_list("third", 3, std::pow(to_angstrom, 3) / to_kcal);
    write_list("fourth", 4, std::pow(to_angstrom, 4) / to_kcal);
  }
  return out;
}

}  // namespace overtone
