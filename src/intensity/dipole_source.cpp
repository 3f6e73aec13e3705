#include "intensity/dipole_source.hpp"

#include <fmt/format.h>
#include <toml++/toml.h>

#include <cmath>
#include <fstream>
#include <sstream>
#include <utility>

#include "core/error.hpp"
#include "core/units.hpp"
#include "potential/detail_toml_text.hpp"

namespace overtone {

namespace {

// Largest |tensor element| a file may give, in e or Å²: atomic polar tensor elements of
// real molecules stay below ~3 e and polarizability derivatives below ~50 Å² (common
// practice, no source); beyond 1e3 a number is a slip of the pen.
constexpr double max_tensor_element = 1e3;

}  // namespace

Eigen::MatrixXd DipoleSource::polarizability_derivatives(
    const Eigen::VectorXd& /*coordinates_angstrom*/) const {
  throw Error("the dipole source '" + description() + "' gives no polarizability derivatives");
}

std::array<Eigen::MatrixXd, 3> DipoleSource::dipole_second_derivatives(
    const Eigen::VectorXd& /*coordinates*/) const {
  throw Error("the dipole source '" + description() + "' gives no second dipole derivatives");
}

void DipoleSource::check_size(const Eigen::VectorXd& coordinates_angstrom) const {
  if (coordinates_angstrom.size() != static_cast<Eigen::Index>(3 * atom_count()))
    throw Error(fmt::format("the dipole source expects {} coordinates, got {}", 3 * atom_count(),
                            coordinates_angstrom.size()));
}

FixedChargeDipole::FixedChargeDipole(std::vector<double> charges_e, std::string origin)
    : charges_(std::move(charges_e)), origin_(std::move(origin)) {
  if (charges_.empty()) throw Error("fixed partial charges: expected one charge per atom, got none");
  for (const double charge : charges_)
    if (!std::isfinite(charge))
      throw Error("fixed partial charges: expected finite charges, got a non-finite one");
}

std::string FixedChargeDipole::description() const { return "fixed partial charges (" + origin_ + ")"; }

Eigen::MatrixXd FixedChargeDipole::dipole_derivatives(const Eigen::VectorXd& coordinates_angstrom) const {
  check_size(coordinates_angstrom);
  const Eigen::Index n = static_cast<Eigen::Index>(charges_.size());
  Eigen::MatrixXd p = Eigen::MatrixXd::Zero(3, 3 * n);
  for (Eigen::Index a = 0; a < n; ++a)
    p.block(0, 3 * a, 3, 3) = charges_[static_cast<std::size_t>(a)] * Eigen::Matrix3d::Identity();
  return p;
}

std::optional<Eigen::Vector3d> FixedChargeDipole::dipole(const Eigen::VectorXd& coordinates_angstrom) const {
  check_size(coordinates_angstrom);
  Eigen::Vector3d mu = Eigen::Vector3d::Zero();
  for (std::size_t a = 0; a < charges_.size(); ++a)
    mu += charges_[a] * coordinates_angstrom.segment<3>(3 * static_cast<Eigen::Index>(a));
  return mu;
}

Eigen::Matrix3d best_rotation(const Eigen::VectorXd& from_angstrom, const Eigen::VectorXd& to_angstrom,
                              double* rms_left_angstrom) {
  if (from_angstrom.size() != to_angstrom.size() || from_angstrom.size() % 3 != 0 ||
      from_angstrom.size() == 0)
    throw Error(fmt::format("best rotation: expected two geometries of one size, got {} and {} coordinates",
                            from_angstrom.size(), to_angstrom.size()));
  const Eigen::Index n = from_angstrom.size() / 3;
  const Eigen::MatrixXd p = Eigen::Map<const Eigen::MatrixXd>(from_angstrom.data(), 3, n);
  const Eigen::MatrixXd x = Eigen::Map<const Eigen::MatrixXd>(to_angstrom.data(), 3, n);
  const Eigen::MatrixXd pc = p.colwise() - p.rowwise().mean();
  const Eigen::MatrixXd xc = x.colwise() - x.rowwise().mean();
  const Eigen::Matrix3d h = pc * xc.transpose();
  const Eigen::JacobiSVD<Eigen::Matrix3d> svd(h, Eigen::ComputeFullU | Eigen::ComputeFullV);
  Eigen::Matrix3d d = Eigen::Matrix3d::Identity();
  d(2, 2) = (svd.matrixV() * svd.matrixU().transpose()).determinant() < 0.0 ? -1.0 : 1.0;
  const Eigen::Matrix3d rotation = svd.matrixV() * d * svd.matrixU().transpose();
  if (rms_left_angstrom)
    *rms_left_angstrom = std::sqrt((rotation * pc - xc).squaredNorm() / static_cast<double>(n));
  return rotation;
}

// --- electric-response files -------------------------------------------------------------

namespace {

class ResponseReader {
 public:
  explicit ResponseReader(std::string origin) : origin_(std::move(origin)) {}

  [[noreturn]] void fail(const toml::node* node, const std::string& message) const {
    std::string where = "electric-response file '" + origin_ + "'";
    if (node != nullptr && node->source().begin.line > 0)
      where += " line " + std::to_string(node->source().begin.line);
    throw Error(where + ": " + message);
  }
  const toml::node& require(const toml::table& table, const char* key, const std::string& where) const {
    const toml::node* node = table.get(key);
    if (node == nullptr) fail(&table, "missing key '" + std::string(key) + "' in " + where);
    return *node;
  }
  std::string string(const toml::node& node, const std::string& key) const {
    if (const auto* value = node.as_string()) return value->get();
    fail(&node, "'" + key + "' must be a string");
  }
  double number(const toml::node& node, const std::string& key) const {
    double value = 0.0;
    if (const auto* floating = node.as_floating_point())
      value = floating->get();
    else if (const auto* integer = node.as_integer())
      value = static_cast<double>(integer->get());
    else
      fail(&node, "'" + key + "' must hold numbers");
    if (!std::isfinite(value) || std::abs(value) > max_tensor_element)
      fail(&node, fmt::format("'{}' must hold finite numbers of magnitude at most {}, got {}", key,
                              max_tensor_element, value));
    return value;
  }
  // A vector of `size` numbers.
  Eigen::VectorXd vector(const toml::node& node, const std::string& key, Eigen::Index size) const {
    const toml::array* array = node.as_array();
    if (array == nullptr || static_cast<Eigen::Index>(array->size()) != size)
      fail(&node, fmt::format("'{}' must be an array of {} numbers", key, size));
    Eigen::VectorXd values(size);
    for (Eigen::Index i = 0; i < size; ++i) values[i] = number(*array->get(static_cast<std::size_t>(i)), key);
    return values;
  }
  // rows × columns numbers as an array of rows.
  Eigen::MatrixXd matrix(const toml::node& node, const std::string& key, Eigen::Index rows,
                         Eigen::Index columns) const {
    const toml::array* array = node.as_array();
    if (array == nullptr || static_cast<Eigen::Index>(array->size()) != rows)
      fail(&node, fmt::format("'{}' must be an array of {} rows of {} numbers", key, rows, columns));
    Eigen::MatrixXd values(rows, columns);
    for (Eigen::Index r = 0; r < rows; ++r)
      values.row(r) = vector(*array->get(static_cast<std::size_t>(r)), key, columns).transpose();
    return values;
  }
  void check_keys(const toml::table& table, const std::string& where,
                  std::initializer_list<const char*> keys) const {
    for (const auto& [key, node] : table) {
      bool known = false;
      for (const char* allowed : keys) known = known || key.str() == allowed;
      if (!known) fail(&node, "unknown key '" + std::string(key.str()) + "' in " + where);
    }
  }

 private:
  std::string origin_;
};

struct ResponseUnits {
  double length = 1.0;                     // to Å
  double dipole = 1.0;                     // to e·Å
  double dipole_derivative = 1.0;          // to e
  double polarizability_derivative = 1.0;  // to Å²
};

ResponseUnits read_units(const ResponseReader& reader, const toml::table& root) {
  ResponseUnits factors;
  const toml::node* node = root.get("units");
  if (node == nullptr) return factors;
  const toml::table* table = node->as_table();
  if (table == nullptr) reader.fail(node, "'units' must be a table ([units])");
  reader.check_keys(*table, "[units]", {"length", "dipole_derivative", "polarizability_derivative"});
  if (const toml::node* length = table->get("length")) {
    const std::string unit = reader.string(*length, "units.length");
    if (unit == "bohr")
      factors.length = units::angstrom_per_bohr;
    else if (unit != "angstrom")
      reader.fail(length, "unknown length unit '" + unit + "'; expected angstrom or bohr");
  }
  // The permanent dipole takes the unit of the dipole derivative times the length unit.
  if (const toml::node* dipole = table->get("dipole_derivative")) {
    const std::string unit = reader.string(*dipole, "units.dipole_derivative");
    if (unit == "debye/angstrom")
      factors.dipole_derivative = 1.0 / units::debye_per_e_angstrom;
    else if (unit != "e" && unit != "atomic")
      reader.fail(dipole,
                  "unknown dipole-derivative unit '" + unit + "'; expected e, atomic or debye/angstrom");
  }
  factors.dipole = factors.dipole_derivative * factors.length;
  if (const toml::node* alpha = table->get("polarizability_derivative")) {
    const std::string unit = reader.string(*alpha, "units.polarizability_derivative");
    if (unit == "bohr^2" || unit == "atomic")
      factors.polarizability_derivative = units::angstrom_per_bohr * units::angstrom_per_bohr;
    else if (unit != "angstrom^2")
      reader.fail(alpha, "unknown polarizability-derivative unit '" + unit +
                             "'; expected angstrom^2, bohr^2 or atomic");
  }
  return factors;
}

void read_atom(const ResponseReader& reader, const toml::node& node, const ResponseUnits& factors,
               ElectricResponseData& data, bool& any_polarizability) {
  const toml::table* atom = node.as_table();
  if (atom == nullptr) reader.fail(&node, "each [[atoms]] entry must be a table");
  reader.check_keys(*atom, "[[atoms]]", {"element", "position", "polar_tensor", "polarizability_derivative"});
  const Eigen::Index a = static_cast<Eigen::Index>(data.elements.size());
  data.elements.push_back(reader.string(reader.require(*atom, "element", "[[atoms]]"), "element"));
  data.positions_angstrom.conservativeResize(3 * (a + 1));
  data.positions_angstrom.segment<3>(3 * a) =
      factors.length * reader.vector(reader.require(*atom, "position", "[[atoms]]"), "position", 3);
  data.dipole_derivatives.conservativeResize(3, 3 * (a + 1));
  data.dipole_derivatives.block(0, 3 * a, 3, 3) =
      factors.dipole_derivative *
      reader.matrix(reader.require(*atom, "polar_tensor", "[[atoms]]"), "polar_tensor", 3, 3);
  const toml::node* alpha = atom->get("polarizability_derivative");
  if ((alpha != nullptr) != any_polarizability && a > 0)
    reader.fail(&node, "polarizability_derivative must be given for every atom or for none");
  any_polarizability = alpha != nullptr;
  if (alpha == nullptr) return;
  if (!data.polarizability_derivatives) data.polarizability_derivatives = Eigen::MatrixXd(6, 0);
  data.polarizability_derivatives->conservativeResize(6, 3 * (a + 1));
  // Rows of the file: the displacement x, y, z; columns αxx αyy αzz αxy αxz αyz.
  data.polarizability_derivatives->block(0, 3 * a, 6, 3) =
      factors.polarizability_derivative *
      reader.matrix(*alpha, "polarizability_derivative", 3, 6).transpose();
}

}  // namespace

ElectricResponseData parse_electric_response(const std::string& toml_text, const std::string& origin) {
  detail::check_toml_text(toml_text, "electric-response file '" + origin + "'");
  const ResponseReader reader(origin);
  toml::table root;
  try {
    root = toml::parse(toml_text, origin);
  } catch (const toml::parse_error& error) {
    throw Error("electric-response file '" + origin + "' line " + std::to_string(error.source().begin.line) +
                ": " + std::string(error.description()));
  }
  reader.check_keys(root, "the top level",
                    {"format", "format_version", "title", "units", "source", "dipole", "atoms"});
  if (reader.string(reader.require(root, "format", "the top level"), "format") !=
      "overtone-electric-response")
    reader.fail(root.get("format"), "format must be \"overtone-electric-response\"");
  if (root.get("format_version") == nullptr || root.get("format_version")->value<int64_t>() != int64_t{1})
    reader.fail(root.get("format_version"),
                "format_version must be the integer 1 (the only version this program reads)");
  ElectricResponseData data;
  data.title = reader.string(reader.require(root, "title", "the top level"), "title");
  const toml::table* source = root.get("source") ? root.get("source")->as_table() : nullptr;
  if (source == nullptr) reader.fail(&root, "missing table [source] (citation and method of the tensors)");
  reader.check_keys(*source, "[source]", {"citation", "method"});
  data.citation = reader.string(reader.require(*source, "citation", "[source]"), "source.citation");
  data.method = reader.string(reader.require(*source, "method", "[source]"), "source.method");
  const ResponseUnits factors = read_units(reader, root);
  const toml::array* atoms = root.get("atoms") ? root.get("atoms")->as_array() : nullptr;
  if (atoms == nullptr || atoms->empty()) reader.fail(&root, "expected at least one [[atoms]] entry");
  data.dipole_derivatives.resize(3, 0);
  bool any_polarizability = false;
  for (const toml::node& atom : *atoms) read_atom(reader, atom, factors, data, any_polarizability);
  if (const toml::node* dipole = root.get("dipole"))
    data.dipole_e_angstrom = factors.dipole * reader.vector(*dipole, "dipole", 3);
  return data;
}

ElectricResponseData read_electric_response(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw Error("cannot read electric-response file '" + path + "'");
  std::ostringstream text;
  text << in.rdbuf();
  return parse_electric_response(text.str(), path);
}

// --- polar tensors ---------------------------------------------------------------------------

PolarTensorDipole::PolarTensorDipole(ElectricResponseData data, const Molecule& molecule,
                                     const PolarTensorOptions& options)
    : data_(std::move(data)), options_(options) {
  if (data_.elements.size() != molecule.atom_count())
    throw Error(fmt::format("electric-response file '{}' is for {} atoms, the molecule has {}", data_.title,
                            data_.elements.size(), molecule.atom_count()));
  for (std::size_t a = 0; a < data_.elements.size(); ++a)
    if (data_.elements[a] != element_symbol(molecule.atoms[a].atomic_number))
      throw Error(fmt::format("electric-response file '{}' expects {} as atom {}, the molecule has {}",
                              data_.title, data_.elements[a], a + 1,
                              element_symbol(molecule.atoms[a].atomic_number)));
  double rms = 0.0;
  best_rotation(data_.positions_angstrom, molecule.coordinates(), &rms);
  if (rms > options_.geometry_limit_angstrom)
    throw Error(
        fmt::format("electric-response file '{}': its geometry lies {:.3f} Å (rms) from the molecule's "
                    "after the best rotation, expected at most {} Å (another molecule or atom order?)",
                    data_.title, rms, options_.geometry_limit_angstrom));
  if (rms > options_.geometry_warning_angstrom)
    warnings_.push_back(
        fmt::format("the electric-response tensors were computed at a geometry {:.3f} Å (rms) "
                    "from the analysed one; intensities carry that difference",
                    rms));
}

std::string PolarTensorDipole::description() const {
  return "atomic polar tensors" +
         std::string(has_polarizability_derivatives() ? " and polarizability derivatives" : "") + " (" +
         data_.title + ")";
}

std::string PolarTensorDipole::notes() const {
  return "tensors from " + data_.method + " (" + data_.citation +
         "), rotated onto the analysed geometry; double-harmonic intensities" +
         (has_polarizability_derivatives() ? "" : "; no polarizability derivatives: no Raman activities");
}

Eigen::Matrix3d PolarTensorDipole::rotation_to(const Eigen::VectorXd& coordinates_angstrom) const {
  check_size(coordinates_angstrom);
  return best_rotation(data_.positions_angstrom, coordinates_angstrom);
}

Eigen::MatrixXd PolarTensorDipole::dipole_derivatives(const Eigen::VectorXd& coordinates_angstrom) const {
  const Eigen::Matrix3d r = rotation_to(coordinates_angstrom);
  Eigen::MatrixXd p(3, data_.dipole_derivatives.cols());
  // μ' = R μ and r' = R r, so ∂μ'/∂r'_a = R P_a Rᵀ.
  for (Eigen::Index a = 0; a < p.cols() / 3; ++a)
    p.block(0, 3 * a, 3, 3) = r * data_.dipole_derivatives.block(0, 3 * a, 3, 3) * r.transpose();
  return p;
}

std::optional<Eigen::Vector3d> PolarTensorDipole::dipole(const Eigen::VectorXd& coordinates_angstrom) const {
  if (!data_.dipole_e_angstrom) return std::nullopt;
  return Eigen::Vector3d(rotation_to(coordinates_angstrom) * *data_.dipole_e_angstrom);
}

namespace {

Eigen::Matrix3d symmetric_from_row(const Eigen::Ref<const Eigen::VectorXd>& v) {
  Eigen::Matrix3d m;
  m << v[0], v[3], v[4], v[3], v[1], v[5], v[4], v[5], v[2];
  return m;
}

Eigen::Matrix<double, 6, 1> row_from_symmetric(const Eigen::Matrix3d& m) {
  Eigen::Matrix<double, 6, 1> v;
  v << m(0, 0), m(1, 1), m(2, 2), m(0, 1), m(0, 2), m(1, 2);
  return v;
}

}  // namespace

Eigen::MatrixXd PolarTensorDipole::polarizability_derivatives(
    const Eigen::VectorXd& coordinates_angstrom) const {
  if (!data_.polarizability_derivatives)
    return DipoleSource::polarizability_derivatives(coordinates_angstrom);
  const Eigen::Matrix3d r = rotation_to(coordinates_angstrom);
  const Eigen::MatrixXd& source = *data_.polarizability_derivatives;
  Eigen::MatrixXd result(6, source.cols());
  // α' = R α Rᵀ and ∂/∂r'_γ = Σ_δ R_γδ ∂/∂r_δ.
  for (Eigen::Index a = 0; a < source.cols() / 3; ++a) {
    Eigen::Matrix3d rotated[3];
    for (int d = 0; d < 3; ++d) rotated[d] = r * symmetric_from_row(source.col(3 * a + d)) * r.transpose();
    for (int g = 0; g < 3; ++g) {
      Eigen::Matrix3d sum = Eigen::Matrix3d::Zero();
      for (int d = 0; d < 3; ++d) sum += r(g, d) * rotated[d];
      result.col(3 * a + g) = row_from_symmetric(sum);
    }
  }
  return result;
}

}  // namespace overtone
