#include "potential/valence_force_field.hpp"

#include <fmt/format.h>
#include <toml++/toml.h>

#include <algorithm>
#include <cmath>
#include <fstream>
#include <map>
#include <set>
#include <sstream>
#include <unsupported/Eigen/AutoDiff>
#include <vector>

#include "core/error.hpp"
#include "core/units.hpp"
#include "potential/detail_internal_coordinates.hpp"
#include "potential/detail_toml_text.hpp"
#include "potential/file_limits.hpp"

namespace overtone {
namespace detail {
namespace {

enum class CoordinateKind { distance, angle, linear_bend, dihedral, out_of_plane_angle, pyramid_height };

struct CoordinateKindInfo {
  const char* name;
  CoordinateKind kind;
  int atom_count;
  bool angular;  // reference given in the file's angle unit
};

const CoordinateKindInfo coordinate_kinds[] = {
    {"distance", CoordinateKind::distance, 2, false},
    {"angle", CoordinateKind::angle, 3, true},
    {"linear_bend", CoordinateKind::linear_bend, 3, true},
    {"dihedral", CoordinateKind::dihedral, 4, true},
    {"out_of_plane_angle", CoordinateKind::out_of_plane_angle, 4, true},
    {"pyramid_height", CoordinateKind::pyramid_height, 4, false},
};

struct CoordinateDefinition {
  std::string name;
  CoordinateKind kind = CoordinateKind::distance;
  std::vector<int> atoms;  // 0-based indices into the molecule
  double reference = 0.0;  // Å or rad; unused for linear_bend (always linear)
  // An angle whose reference is 180°: its displacement is taken as s² = (π − θ)² like a
  // linear_bend (the same terms, and regular at linearity), so it takes even powers only.
  bool linear_reference = false;

  // A linear_bend, or an angle used like one.
  bool even_in_bend() const {
    return kind == CoordinateKind::linear_bend || (kind == CoordinateKind::angle && linear_reference);
  }
};

std::string atom_list(const std::vector<int>& atoms) {
  std::string text;
  for (const int a : atoms) text += (text.empty() ? "" : ", ") + std::to_string(a + 1);
  return text;
}

// Dihedrals, out-of-plane angles and pyramid heights have no value when three of their
// atoms are exactly collinear: a clear error instead of an arbitrary number or NaN.
[[noreturn]] void undefined_coordinate(const CoordinateDefinition& c, const char* what,
                                       const std::vector<int>& collinear) {
  throw Error("coordinate '" + c.name + "' (" + what + " of atoms " + atom_list(c.atoms) +
              ") is undefined at this geometry: atoms " + atom_list(collinear) + " are exactly collinear");
}

enum class TermKind { morse, polynomial, coupling, cosine_series };

struct Factor {
  int coordinate = 0;  // index into the coordinate list
  int power = 1;
};

struct Term {
  TermKind kind = TermKind::polynomial;
  std::vector<Factor> factors;
  double coefficient = 0.0;                   // coupling: f / Π p_k!, kcal/mol per Å^n rad^m
  std::array<double, 5> polynomial{};         // coefficient of Δq^n (= f_n / n!), kcal/mol per unit^n
  double depth = 0.0;                         // Morse D_e, kcal/mol
  double width = 0.0;                         // Morse a, 1/Å
  std::vector<double> barriers;               // cosine series V_n, kcal/mol
  std::vector<double> phases;                 // cosine series δ_n, rad
  std::vector<int> atoms;                     // the term's atoms, 0-based, sorted, unique
  std::vector<std::vector<int>> local_atoms;  // per factor: positions in `atoms`
};

// ---------------------------------------------------------------------------
// Evaluation, templated on the scalar type (double, AutoDiffScalar, nested AutoDiffScalar).

template <typename S>
S raw_coordinate(const CoordinateDefinition& c, const std::vector<int>& local, const Vec3<S>* p) {
  switch (c.kind) {
    case CoordinateKind::distance:
      return distance(p[local[0]], p[local[1]]);
    case CoordinateKind::angle:
      return bend_angle(p[local[0]], p[local[1]], p[local[2]]);
    case CoordinateKind::linear_bend:
      return linear_bend_squared(p[local[0]], p[local[1]], p[local[2]]);
    case CoordinateKind::dihedral:
      if (exactly_collinear(p[local[0]], p[local[1]], p[local[2]]))
        undefined_coordinate(c, "dihedral", {c.atoms[0], c.atoms[1], c.atoms[2]});
      if (exactly_collinear(p[local[1]], p[local[2]], p[local[3]]))
        undefined_coordinate(c, "dihedral", {c.atoms[1], c.atoms[2], c.atoms[3]});
      return dihedral_angle(p[local[0]], p[local[1]], p[local[2]], p[local[3]]);
    case CoordinateKind::out_of_plane_angle:
      if (exactly_collinear(p[local[1]], p[local[0]], p[local[2]]))
        undefined_coordinate(c, "out-of-plane angle", {c.atoms[1], c.atoms[0], c.atoms[2]});
      return out_of_plane_angle(p[local[0]], p[local[1]], p[local[2]], p[local[3]]);
    case CoordinateKind::pyramid_height:
      if (exactly_collinear(p[local[1]], p[local[2]], p[local[3]]))
        undefined_coordinate(c, "pyramid height", {c.atoms[1], c.atoms[2], c.atoms[3]});
      return pyramid_height(p[local[0]], p[local[1]], p[local[2]], p[local[3]]);
  }
  return S(0.0);
}

// The variable the Taylor terms are written in: Δq = q − q_ref (dihedrals wrapped into
// (−π, π]); for a linear bend the even variable s² = (π − θ)².
template <typename S>
S displacement(const CoordinateDefinition& c, const std::vector<int>& local, const Vec3<S>* p) {
  if (c.even_in_bend()) return linear_bend_squared(p[local[0]], p[local[1]], p[local[2]]);
  S value = raw_coordinate(c, local, p);
  value = value - c.reference;
  if (c.kind == CoordinateKind::dihedral) {
    const double turns = std::round(plain_value(value) / (2.0 * units::pi));
    if (turns != 0.0) value = value - turns * 2.0 * units::pi;
  }
  return value;
}

template <typename S>
S integer_power(const S& x, int n) {
  S result = S(1.0);
  for (int i = 0; i < n; ++i) result = result * x;
  return result;
}

template <typename S>
S term_energy(const Term& term, const std::vector<CoordinateDefinition>& coordinates, const Vec3<S>* p) {
  using std::cos;
  using std::exp;
  switch (term.kind) {
    case TermKind::morse: {
      const S d = displacement(coordinates[term.factors[0].coordinate], term.local_atoms[0], p);
      const S decay = S(1.0) - exp(-term.width * d);
      return term.depth * decay * decay;
    }
    case TermKind::polynomial: {
      const S d = displacement(coordinates[term.factors[0].coordinate], term.local_atoms[0], p);
      // Horner in d; for a linear bend d is already s², and only c2, c4 are nonzero
      // (checked on load), so the even polynomial is c2 s² + c4 s⁴ = c2 d + c4 d².
      if (coordinates[term.factors[0].coordinate].even_in_bend())
        return d * (term.polynomial[2] + d * term.polynomial[4]);
      return d * (term.polynomial[1] +
                  d * (term.polynomial[2] + d * (term.polynomial[3] + d * term.polynomial[4])));
    }
    case TermKind::coupling: {
      S product = S(term.coefficient);
      for (std::size_t k = 0; k < term.factors.size(); ++k) {
        const CoordinateDefinition& c = coordinates[term.factors[k].coordinate];
        const S d = displacement(c, term.local_atoms[k], p);
        const int power = c.even_in_bend() ? term.factors[k].power / 2 : term.factors[k].power;
        product = product * integer_power(d, power);
      }
      return product;
    }
    case TermKind::cosine_series: {
      const CoordinateDefinition& c = coordinates[term.factors[0].coordinate];
      const std::vector<int>& local = term.local_atoms[0];
      S sum = S(0.0);
      if (c.kind == CoordinateKind::angle) {
        // Through cos θ, so that the series is smooth at 180° (its usual minimum).
        for (std::size_t n = 0; n < term.barriers.size(); ++n)
          sum = sum + 0.5 * term.barriers[n] *
                          (S(1.0) - cosine_of_multiple_bend(p[local[0]], p[local[1]], p[local[2]],
                                                            static_cast<int>(n + 1), term.phases[n]));
        return sum;
      }
      const S angle = raw_coordinate(c, local, p);
      for (std::size_t n = 0; n < term.barriers.size(); ++n)
        sum = sum + 0.5 * term.barriers[n] * (S(1.0) - cos(double(n + 1) * angle - term.phases[n]));
      return sum;
    }
  }
  return S(0.0);
}

// Derivatives of one term on its own 3K local Cartesian coordinates, scattered into the
// full gradient / Hessian. N is 3K for the common small terms (fixed-size, no heap) or
// Eigen::Dynamic for terms spanning more than four atoms.
template <int N>
struct TermDifferentiator {
  using FirstDerivatives = Eigen::Matrix<double, N, 1>;
  using First = Eigen::AutoDiffScalar<FirstDerivatives>;
  using SecondDerivatives = Eigen::Matrix<First, N, 1>;
  using Second = Eigen::AutoDiffScalar<SecondDerivatives>;

  static double energy_and_gradient(const Term& term, const std::vector<CoordinateDefinition>& coordinates,
                                    const Eigen::VectorXd& x, Eigen::VectorXd& gradient) {
    const int atom_count = static_cast<int>(term.atoms.size());
    const int n = 3 * atom_count;
    std::vector<Vec3<First>> p(atom_count);
    for (int a = 0; a < atom_count; ++a) {
      const int g = 3 * term.atoms[a];
      p[a] = {First(x[g], n, 3 * a), First(x[g + 1], n, 3 * a + 1), First(x[g + 2], n, 3 * a + 2)};
    }
    const First e = term_energy(term, coordinates, p.data());
    if (e.derivatives().size() == n)
      for (int i = 0; i < n; ++i) gradient[3 * term.atoms[i / 3] + i % 3] += e.derivatives()[i];
    return e.value();
  }

  static void add_hessian(const Term& term, const std::vector<CoordinateDefinition>& coordinates,
                          const Eigen::VectorXd& x, Eigen::MatrixXd& hessian) {
    const int atom_count = static_cast<int>(term.atoms.size());
    const int n = 3 * atom_count;
    auto seed = [&](double value, int index) {
      Second s;
      s.value() = First(value, n, index);
      s.derivatives() = SecondDerivatives::Constant(n, First(0.0));
      s.derivatives()[index] = First(1.0);
      if (N == Eigen::Dynamic)  // dynamic inner derivatives must have the full size
        for (int i = 0; i < n; ++i) s.derivatives()[i].derivatives() = FirstDerivatives::Zero(n);
      return s;
    };
    std::vector<Vec3<Second>> p(atom_count);
    for (int a = 0; a < atom_count; ++a) {
      const int g = 3 * term.atoms[a];
      p[a] = {seed(x[g], 3 * a), seed(x[g + 1], 3 * a + 1), seed(x[g + 2], 3 * a + 2)};
    }
    const Second e = term_energy(term, coordinates, p.data());
    if (e.derivatives().size() != n) return;  // constant term
    for (int i = 0; i < n; ++i) {
      const FirstDerivatives& row = e.derivatives()[i].derivatives();
      if (row.size() != n) continue;
      const int gi = 3 * term.atoms[i / 3] + i % 3;
      for (int j = 0; j < n; ++j) hessian(gi, 3 * term.atoms[j / 3] + j % 3) += row[j];
    }
  }
};

template <typename Visitor>
void dispatch_on_size(const Term& term, Visitor&& visit) {
  switch (term.atoms.size()) {
    case 2:
      visit(TermDifferentiator<6>{});
      break;
    case 3:
      visit(TermDifferentiator<9>{});
      break;
    case 4:
      visit(TermDifferentiator<12>{});
      break;
    default:
      visit(TermDifferentiator<Eigen::Dynamic>{});
      break;
  }
}

// ---------------------------------------------------------------------------
// The potential.

class ValenceForceField final : public Potential {
 public:
  ValenceForceField(std::string description, std::size_t atom_count,
                    std::vector<CoordinateDefinition> coordinates, std::vector<Term> terms)
      : description_(std::move(description)),
        atom_count_(atom_count),
        coordinates_(std::move(coordinates)),
        terms_(std::move(terms)) {}

  std::string description() const override { return description_; }
  std::size_t atom_count() const override { return atom_count_; }
  bool has_analytic_hessian() const override { return true; }
  // The evaluation reads only the terms parsed at construction.
  bool supports_concurrent_evaluation() const override { return true; }

 protected:
  double compute_energy(const Eigen::VectorXd& x) const override {
    double energy = 0.0;
    std::vector<Vec3<double>> p;
    for (const Term& term : terms_) {
      p.resize(term.atoms.size());
      for (std::size_t a = 0; a < term.atoms.size(); ++a) {
        const int g = 3 * term.atoms[a];
        p[a] = {x[g], x[g + 1], x[g + 2]};
      }
      energy += term_energy(term, coordinates_, p.data());
    }
    return energy;
  }

  double compute_energy_and_gradient(const Eigen::VectorXd& x, Eigen::VectorXd& gradient) const override {
    gradient.setZero();
    double energy = 0.0;
    for (const Term& term : terms_)
      dispatch_on_size(term, [&](auto differentiator) {
        energy += differentiator.energy_and_gradient(term, coordinates_, x, gradient);
      });
    return energy;
  }

  Eigen::MatrixXd compute_hessian(const Eigen::VectorXd& x) const override {
    check_twice_differentiable(x);
    Eigen::MatrixXd hessian = Eigen::MatrixXd::Zero(x.size(), x.size());
    for (const Term& term : terms_)
      dispatch_on_size(
          term, [&](auto differentiator) { differentiator.add_hessian(term, coordinates_, x, hessian); });
    // Each term's local Hessian is symmetric up to round-off; make the sum exactly so.
    return 0.5 * (hessian + hessian.transpose());
  }

 private:
  // A term in θ − θ_ref with θ_ref ≠ 180° (or a cosine series with a phase that is not a
  // multiple of π) has a cusp where its angle is exactly linear: the gradient there is the
  // symmetric one, but no second derivative exists, so the Hessian is refused.
  void check_twice_differentiable(const Eigen::VectorXd& x) const {
    for (const Term& term : terms_) {
      if (term.kind == TermKind::morse) continue;
      bool odd_phase = false;
      for (const double phase : term.phases)
        odd_phase = odd_phase || std::abs(std::sin(phase)) >= phase_multiple_of_pi_tolerance;
      if (term.kind == TermKind::cosine_series && !odd_phase) continue;
      for (const Factor& factor : term.factors) {
        const CoordinateDefinition& c = coordinates_[factor.coordinate];
        if (c.kind != CoordinateKind::angle || c.linear_reference) continue;
        Vec3<double> p[3];
        for (int k = 0; k < 3; ++k) p[k] = {x[3 * c.atoms[k]], x[3 * c.atoms[k] + 1], x[3 * c.atoms[k] + 2]};
        if (!exactly_collinear(p[0], p[1], p[2])) continue;
        throw Error(description_ + " has no second derivative at this geometry: angle '" + c.name +
                    "' (atoms " + atom_list(c.atoms) + ") is exactly linear, where a term in it " +
                    (term.kind == TermKind::cosine_series
                         ? std::string("with a phase that is not a multiple of 180°")
                         : "about a reference of " + std::to_string(c.reference * 180.0 / units::pi) + "°") +
                    " has a cusp; start from a bent structure, or describe a linear arrangement with a "
                    "linear_bend or an angle whose reference is 180°");
      }
    }
  }

  std::string description_;
  std::size_t atom_count_;
  std::vector<CoordinateDefinition> coordinates_;
  std::vector<Term> terms_;
};

// ---------------------------------------------------------------------------
// Reading the file.

class Reader {
 public:
  explicit Reader(std::string origin) : origin_(std::move(origin)) {}

  [[noreturn]] void fail(const toml::node* node, const std::string& message) const {
    std::string where = "valence force field '" + origin_ + "'";
    if (node != nullptr && node->source().begin.line > 0)
      where += " line " + std::to_string(node->source().begin.line);
    throw Error(where + ": " + message);
  }
  [[noreturn]] void fail(const toml::node_view<const toml::node>& view, const std::string& message) const {
    fail(view.node(), message);
  }

  // Rejects keys outside `allowed` (typos in hand-written files must not pass silently).
  void check_keys(const toml::table& table, const std::string& context,
                  std::initializer_list<const char*> allowed) const {
    for (const auto& entry : table) {
      // A named copy, not a structured binding: C++17 does not let a lambda capture one.
      const std::string_view key = entry.first.str();
      const bool known = std::any_of(allowed.begin(), allowed.end(), [&](const char* a) { return key == a; });
      if (!known) {
        std::string list;
        for (const char* a : allowed) list += std::string(list.empty() ? "" : ", ") + a;
        fail(&entry.second,
             "unknown key '" + std::string(key) + "' in " + context + "; expected one of: " + list);
      }
    }
  }

  const toml::node& require(const toml::table& table, const char* key, const std::string& context) const {
    const toml::node* node = table.get(key);
    if (node == nullptr) fail(&table, "missing key '" + std::string(key) + "' in " + context);
    return *node;
  }

  double number(const toml::node& node, const std::string& key) const {
    if (auto value = node.value<double>()) {
      if (!std::isfinite(*value)) fail(&node, "key '" + key + "' must be a finite number");
      return *value;
    }
    fail(&node, "key '" + key + "' must be a number, got " + type_name(node));
  }

  // value (internal units) must satisfy |value| ≤ limit (file_limits.hpp).
  double bounded(const toml::node& node, const std::string& key, double value, double limit,
                 const char* unit) const {
    if (std::abs(value) > limit)
      fail(&node, fmt::format("key '{}' is {:.6g} {} after conversion, beyond the largest magnitude this "
                              "program accepts, {:g} {} (docs/valence-force-field.md, Limits)",
                              key, value, unit, limit, unit));
    return value;
  }

  std::string string(const toml::node& node, const std::string& key) const {
    if (const auto* s = node.as_string()) return s->get();
    fail(&node, "key '" + key + "' must be a string, got " + type_name(node));
  }

  const toml::array& array(const toml::node& node, const std::string& key) const {
    if (const auto* a = node.as_array()) return *a;
    fail(&node, "key '" + key + "' must be an array, got " + type_name(node));
  }

  // A required, non-empty [[key]] array of tables: a field without coordinates or without
  // terms is a flat surface, on which every harmonic frequency is zero.
  const toml::array& array_of_tables(const toml::table& parent, const char* key) const {
    const toml::node& node = require(parent, key, "the top level");
    const toml::array* array = node.as_array();
    if (array != nullptr && array->empty())
      fail(&node, "'" + std::string(key) + "' is empty: a valence force field needs at least one [[" + key +
                      "]] entry (a field without them is flat, every frequency zero)");
    if (array == nullptr || !array->is_array_of_tables())
      fail(&node, "'" + std::string(key) + "' must be an array of tables ([[" + key + "]])");
    return *array;
  }

  // A required [key] table.
  const toml::table& table(const toml::table& parent, const char* key) const {
    const toml::node& node = require(parent, key, "the top level");
    if (const toml::table* t = node.as_table()) return *t;
    fail(&node, "'" + std::string(key) + "' must be a table ([" + key + "])");
  }

  std::vector<double> numbers(const toml::node& node, const std::string& key) const {
    std::vector<double> values;
    for (const toml::node& element : array(node, key)) values.push_back(number(element, key));
    return values;
  }

  static std::string type_name(const toml::node& node) {
    std::ostringstream out;
    out << node.type();
    return out.str();
  }

 private:
  std::string origin_;
};

struct ParsedFile {
  std::string title;
  std::vector<std::string> elements;
  std::vector<CoordinateDefinition> coordinates;
  std::vector<Term> terms;
  ValenceForceFieldSource source;
};

double energy_unit_in_kcal_mol(const Reader& reader, const toml::node& node) {
  const std::string unit = reader.string(node, "units.energy");
  if (unit == "aJ") return units::kcal_mol_per_attojoule;
  if (unit == "kcal/mol") return 1.0;
  if (unit == "kJ/mol") return units::kcal_mol_per_kj_mol;
  if (unit == "cm-1") return units::kcal_mol_per_cm1;
  if (unit == "hartree") return units::kcal_mol_per_hartree;
  reader.fail(&node,
              "unknown energy unit '" + unit + "'; expected one of: aJ, kcal/mol, kJ/mol, cm-1, hartree");
}

toml::table parse_toml(const std::string& text, const std::string& origin) {
  check_toml_text(text, "valence force field '" + origin + "'");
  try {
    return toml::parse(text, origin);
  } catch (const toml::parse_error& error) {
    throw Error("valence force field '" + origin + "' line " + std::to_string(error.source().begin.line) +
                ": malformed TOML: " + std::string(error.description()));
  }
}

// The range a reference value can have: what the coordinate can take (angles in [0°, 180°],
// out-of-plane angles in [−90°, 90°], dihedrals within a turn either way) and the size
// limits of file_limits.hpp for lengths.
void check_reference_range(const Reader& reader, const toml::node& node, const CoordinateDefinition& c,
                           bool degrees) {
  // low, high in internal units; `scale` converts them (and the value) to the file's unit.
  auto require_within = [&](double low, double high, double scale, const char* unit, const char* what) {
    if (c.reference >= low && c.reference <= high) return;
    reader.fail(&node, fmt::format("reference of '{}' is {:.6g} {}, outside the range {:g} to {:g} {} {}",
                                   c.name, c.reference * scale, unit, low * scale, high * scale, unit, what));
  };
  const double angle_scale = degrees ? 180.0 / units::pi : 1.0;
  const char* angle_unit = degrees ? "degree" : "rad";
  const double slack = linear_reference_tolerance_rad;  // 180° entered in degrees, converted
  switch (c.kind) {
    case CoordinateKind::distance:
      require_within(0.0, file_limits::distance_angstrom, 1.0, "Å", "this program accepts");
      break;
    case CoordinateKind::angle:
      require_within(0.0, units::pi + slack, angle_scale, angle_unit, "of an angle");
      break;
    case CoordinateKind::out_of_plane_angle:
      require_within(-0.5 * units::pi - slack, 0.5 * units::pi + slack, angle_scale, angle_unit,
                     "of an out-of-plane angle");
      break;
    case CoordinateKind::dihedral:
      require_within(-file_limits::full_turn_rad - slack, file_limits::full_turn_rad + slack, angle_scale,
                     angle_unit, "this program accepts for a dihedral");
      break;
    case CoordinateKind::pyramid_height:
      require_within(-file_limits::pyramid_height_angstrom, file_limits::pyramid_height_angstrom, 1.0, "Å",
                     "this program accepts");
      break;
    case CoordinateKind::linear_bend:
      break;
  }
}

// Optional fixed partial charges (elementary charges, one per element entry) for the
// dipole of intensities (docs/valence-force-field.md, "Charges").
void read_charges(const Reader& reader, const toml::table& root, ParsedFile& parsed) {
  const toml::node* node = root.get("charges");
  if (node == nullptr) return;
  parsed.source.partial_charges = reader.numbers(*node, "charges");
  if (parsed.source.partial_charges.size() != parsed.elements.size())
    reader.fail(node, "key 'charges' must list one charge per element (" +
                          std::to_string(parsed.elements.size()) + "), got " +
                          std::to_string(parsed.source.partial_charges.size()));
  for (const double charge : parsed.source.partial_charges)
    if (!std::isfinite(charge) || std::abs(charge) > max_partial_charge_e)
      reader.fail(node, "charges must be finite and at most " + std::to_string(max_partial_charge_e) +
                            " in magnitude (elementary charges)");
}

ParsedFile parse_file(const std::string& text, const std::string& origin) {
  const toml::table root = parse_toml(text, origin);
  const Reader reader(origin);
  ParsedFile parsed;
  reader.check_keys(
      root, "the top level",
      {"format_version", "title", "elements", "charges", "units", "source", "coordinates", "terms"});

  const toml::node& version = reader.require(root, "format_version", "the top level");
  if (version.value<int64_t>() != int64_t{1})
    reader.fail(&version, "format_version must be the integer 1 (the only version this program reads)");

  parsed.title = reader.string(reader.require(root, "title", "the top level"), "title");
  parsed.source.title = parsed.title;
  for (const toml::node& element :
       reader.array(reader.require(root, "elements", "the top level"), "elements"))
    parsed.elements.push_back(reader.string(element, "elements"));
  if (parsed.elements.empty())
    reader.fail(root.get("elements"), "key 'elements' must list at least one element");
  parsed.source.elements = parsed.elements;
  read_charges(reader, root, parsed);

  // Units.
  const toml::table* units_table = &reader.table(root, "units");
  reader.check_keys(*units_table, "[units]", {"energy", "length", "angle"});
  const double energy_factor =
      energy_unit_in_kcal_mol(reader, reader.require(*units_table, "energy", "[units]"));
  const toml::node& length_node = reader.require(*units_table, "length", "[units]");
  if (reader.string(length_node, "units.length") != "angstrom")
    reader.fail(&length_node, "unknown length unit '" + reader.string(length_node, "units.length") +
                                  "'; expected angstrom");
  const toml::node& angle_node = reader.require(*units_table, "angle", "[units]");
  const std::string angle_unit = reader.string(angle_node, "units.angle");
  double angle_factor = 1.0;
  if (angle_unit == "degree")
    angle_factor = units::pi / 180.0;
  else if (angle_unit != "radian")
    reader.fail(&angle_node, "unknown angle unit '" + angle_unit + "'; expected degree or radian");

  // Source.
  const toml::table* source_table = &reader.table(root, "source");
  reader.check_keys(*source_table, "[source]",
                    {"citation", "status", "notes", "isotopologue", "reported_harmonic_wavenumbers_cm1"});
  parsed.source.citation =
      reader.string(reader.require(*source_table, "citation", "[source]"), "source.citation");
  const toml::node& status_node = reader.require(*source_table, "status", "[source]");
  parsed.source.status = reader.string(status_node, "source.status");
  if (parsed.source.status != "confirmed" && parsed.source.status != "partly confirmed" &&
      parsed.source.status != "from memory")
    reader.fail(&status_node,
                "source.status must be 'confirmed', 'partly confirmed' or 'from memory', got '" +
                    parsed.source.status + "'");
  if (const toml::node* notes = source_table->get("notes"))
    parsed.source.notes = reader.string(*notes, "source.notes");
  if (const toml::node* iso = source_table->get("isotopologue"))
    parsed.source.isotopologue = reader.string(*iso, "source.isotopologue");
  if (const toml::node* reported = source_table->get("reported_harmonic_wavenumbers_cm1"))
    parsed.source.reported_harmonic_wavenumbers_cm1 =
        reader.numbers(*reported, "source.reported_harmonic_wavenumbers_cm1");

  // Coordinates.
  const int element_count = static_cast<int>(parsed.elements.size());
  std::map<std::string, int> coordinate_index;
  for (const toml::node& entry : reader.array_of_tables(root, "coordinates")) {
    const toml::table& table = *entry.as_table();
    const std::string context = "a [[coordinates]] entry";
    reader.check_keys(table, context, {"name", "kind", "atoms", "reference"});
    CoordinateDefinition c;
    const toml::node& name_node = reader.require(table, "name", context);
    c.name = reader.string(name_node, "name");
    if (coordinate_index.count(c.name) != 0)
      reader.fail(&name_node, "coordinate name '" + c.name + "' is used twice");
    const toml::node& kind_node = reader.require(table, "kind", context);
    const std::string kind = reader.string(kind_node, "kind");
    const CoordinateKindInfo* info = nullptr;
    for (const auto& candidate : coordinate_kinds)
      if (kind == candidate.name) info = &candidate;
    if (info == nullptr)
      reader.fail(&kind_node,
                  "unknown coordinate kind '" + kind +
                      "'; expected one of: distance, angle, linear_bend, dihedral, out_of_plane_angle, "
                      "pyramid_height");
    c.kind = info->kind;
    const toml::node& atoms_node = reader.require(table, "atoms", context);
    for (const toml::node& atom : reader.array(atoms_node, "atoms")) {
      const auto index = atom.value<int64_t>();
      if (!index || !atom.is_integer()) reader.fail(&atom, "atom numbers must be integers (1-based)");
      if (*index < 1 || *index > element_count)
        reader.fail(&atom, "atom number " + std::to_string(*index) + " of coordinate '" + c.name +
                               "' is outside 1.." + std::to_string(element_count));
      c.atoms.push_back(static_cast<int>(*index) - 1);
    }
    if (static_cast<int>(c.atoms.size()) != info->atom_count)
      reader.fail(&atoms_node, "a " + kind + " coordinate takes " + std::to_string(info->atom_count) +
                                   " atoms, got " + std::to_string(c.atoms.size()));
    if (std::set<int>(c.atoms.begin(), c.atoms.end()).size() != c.atoms.size())
      reader.fail(&atoms_node, "coordinate '" + c.name + "' names the same atom twice");
    const toml::node* reference = table.get("reference");
    if (c.kind == CoordinateKind::linear_bend) {
      if (reference != nullptr)
        reader.fail(reference,
                    "a linear_bend has no reference value (it is measured from the linear geometry)");
    } else {
      if (reference == nullptr) reader.fail(&table, "missing key 'reference' in coordinate '" + c.name + "'");
      c.reference = reader.number(*reference, "reference") * (info->angular ? angle_factor : 1.0);
      if (c.kind == CoordinateKind::distance && c.reference <= 0.0)
        reader.fail(reference, "reference distance of '" + c.name + "' must be positive");
      check_reference_range(reader, *reference, c, angle_unit == "degree");
      c.linear_reference = c.kind == CoordinateKind::angle &&
                           std::abs(c.reference - units::pi) <= linear_reference_tolerance_rad;
    }
    coordinate_index[c.name] = static_cast<int>(parsed.coordinates.size());
    parsed.coordinates.push_back(c);
  }

  auto find_coordinate = [&](const toml::node& node, const std::string& key) {
    const std::string name = reader.string(node, key);
    auto it = coordinate_index.find(name);
    if (it == coordinate_index.end()) reader.fail(&node, "term refers to unknown coordinate '" + name + "'");
    return it->second;
  };

  // Terms.
  for (const toml::node& entry : reader.array_of_tables(root, "terms")) {
    const toml::table& table = *entry.as_table();
    const std::string context = "a [[terms]] entry";
    const toml::node& kind_node = reader.require(table, "kind", context);
    const std::string kind = reader.string(kind_node, "kind");
    Term term;
    if (kind == "morse") {
      reader.check_keys(table, "a morse term", {"kind", "label", "coordinate", "depth", "width"});
      term.kind = TermKind::morse;
      const toml::node& coordinate_node = reader.require(table, "coordinate", "a morse term");
      term.factors.push_back({find_coordinate(coordinate_node, "coordinate"), 1});
      if (parsed.coordinates[term.factors[0].coordinate].kind != CoordinateKind::distance)
        reader.fail(&coordinate_node, "a morse term needs a distance coordinate");
      const toml::node& depth = reader.require(table, "depth", "a morse term");
      const toml::node& width = reader.require(table, "width", "a morse term");
      term.depth = reader.number(depth, "depth") * energy_factor;
      term.width = reader.number(width, "width");
      if (term.depth <= 0.0) reader.fail(&depth, "morse depth must be positive");
      if (term.width <= 0.0) reader.fail(&width, "morse width must be positive");
      reader.bounded(depth, "depth", term.depth, file_limits::energy_scale_kcal_mol, "kcal/mol");
      reader.bounded(width, "width", term.width, file_limits::morse_width_per_angstrom, "1/Å");
    } else if (kind == "polynomial") {
      reader.check_keys(table, "a polynomial term", {"kind", "label", "coordinate", "f2", "f3", "f4"});
      term.kind = TermKind::polynomial;
      const toml::node& coordinate_node = reader.require(table, "coordinate", "a polynomial term");
      term.factors.push_back({find_coordinate(coordinate_node, "coordinate"), 1});
      const CoordinateDefinition& bend = parsed.coordinates[term.factors[0].coordinate];
      const bool linear = bend.even_in_bend();
      bool any = false;
      double factorial = 1.0;
      for (int order = 2; order <= 4; ++order) {
        factorial *= order;
        const std::string key = "f" + std::to_string(order);
        if (const toml::node* f = table.get(key)) {
          if (linear && order % 2 == 1)
            reader.fail(f, std::string(bend.kind == CoordinateKind::linear_bend
                                           ? "a linear_bend"
                                           : "an angle whose reference is 180° ('" + bend.name + "')") +
                               " takes only even powers (f2, f4): the potential must be even in π − θ");
          term.polynomial[order] =
              reader.bounded(*f, key, reader.number(*f, key) * energy_factor,
                             file_limits::force_constant_kcal_mol, "kcal/mol per unit^n") /
              factorial;
          any = true;
        }
      }
      if (!any) reader.fail(&table, "a polynomial term needs at least one of f2, f3, f4");
    } else if (kind == "coupling") {
      reader.check_keys(table, "a coupling term", {"kind", "label", "coordinates", "f"});
      term.kind = TermKind::coupling;
      const toml::node& list = reader.require(table, "coordinates", "a coupling term");
      std::map<int, int> powers;
      int order = 0;
      for (const toml::node& name : reader.array(list, "coordinates")) {
        ++powers[find_coordinate(name, "coordinates")];
        ++order;
      }
      if (order < 2 || order > 6)
        reader.fail(&list,
                    "a coupling term takes 2 to 6 coordinates (with repeats), got " + std::to_string(order));
      double factorials = 1.0;
      for (const auto& [index, power] : powers) {
        if (parsed.coordinates[index].even_in_bend() && power % 2 == 1)
          reader.fail(&list,
                      std::string(parsed.coordinates[index].kind == CoordinateKind::linear_bend
                                      ? "linear_bend '"
                                      : "angle (reference 180°) '") +
                          parsed.coordinates[index].name +
                          "' must appear an even number of times in a coupling (the potential is even in "
                          "π − θ)");
        for (int k = 2; k <= power; ++k) factorials *= k;
        term.factors.push_back({index, power});
      }
      const toml::node& f_node = reader.require(table, "f", "a coupling term");
      term.coefficient = reader.bounded(f_node, "f", reader.number(f_node, "f") * energy_factor,
                                        file_limits::force_constant_kcal_mol, "kcal/mol per unit^n") /
                         factorials;
    } else if (kind == "cosine_series") {
      reader.check_keys(table, "a cosine_series term", {"kind", "label", "coordinate", "barriers", "phases"});
      term.kind = TermKind::cosine_series;
      const toml::node& coordinate_node = reader.require(table, "coordinate", "a cosine_series term");
      term.factors.push_back({find_coordinate(coordinate_node, "coordinate"), 1});
      const CoordinateKind ck = parsed.coordinates[term.factors[0].coordinate].kind;
      if (ck != CoordinateKind::dihedral && ck != CoordinateKind::out_of_plane_angle &&
          ck != CoordinateKind::angle)
        reader.fail(&coordinate_node,
                    "a cosine_series needs a dihedral, angle or out_of_plane_angle coordinate");
      const toml::node& barriers = reader.require(table, "barriers", "a cosine_series term");
      term.barriers = reader.numbers(barriers, "barriers");
      if (term.barriers.empty()) reader.fail(&barriers, "barriers must list at least one value");
      for (double& b : term.barriers)
        b = reader.bounded(barriers, "barriers", b * energy_factor, file_limits::energy_scale_kcal_mol,
                           "kcal/mol");
      term.phases.assign(term.barriers.size(), 0.0);
      if (const toml::node* phases = table.get("phases")) {
        term.phases = reader.numbers(*phases, "phases");
        if (term.phases.size() != term.barriers.size())
          reader.fail(phases, "phases must have as many entries as barriers (" +
                                  std::to_string(term.barriers.size()) + "), got " +
                                  std::to_string(term.phases.size()));
        for (double& phase : term.phases)
          phase = reader.bounded(*phases, "phases", phase * angle_factor,
                                 file_limits::full_turn_rad + linear_reference_tolerance_rad, "rad");
      }
    } else {
      reader.fail(&kind_node, "unknown term kind '" + kind +
                                  "'; expected one of: morse, polynomial, coupling, "
                                  "cosine_series");
    }
    // The term's atoms and where each coordinate's atoms sit among them.
    std::set<int> atoms;
    for (const Factor& f : term.factors)
      for (int a : parsed.coordinates[f.coordinate].atoms) atoms.insert(a);
    term.atoms.assign(atoms.begin(), atoms.end());
    for (const Factor& f : term.factors) {
      std::vector<int> local;
      for (int a : parsed.coordinates[f.coordinate].atoms)
        local.push_back(
            static_cast<int>(std::lower_bound(term.atoms.begin(), term.atoms.end(), a) - term.atoms.begin()));
      term.local_atoms.push_back(local);
    }
    parsed.terms.push_back(term);
  }
  return parsed;
}

std::string read_text(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw Error("cannot open valence force field file '" + path + "'");
  std::ostringstream text;
  text << in.rdbuf();
  return text.str();
}

std::unique_ptr<Potential> bind(const ParsedFile& parsed, const std::string& origin,
                                const Molecule& molecule) {
  if (parsed.elements.size() != molecule.atom_count())
    throw Error("valence force field '" + origin + "' is for " + std::to_string(parsed.elements.size()) +
                " atoms but the molecule has " + std::to_string(molecule.atom_count()));
  for (std::size_t i = 0; i < parsed.elements.size(); ++i) {
    const std::string symbol = element_symbol(molecule.atoms[i].atomic_number);
    if (symbol != parsed.elements[i])
      throw Error("valence force field '" + origin + "' expects " + parsed.elements[i] + " as atom " +
                  std::to_string(i + 1) + " but the molecule has " + symbol + " there");
  }
  return std::make_unique<ValenceForceField>(parsed.title + " (valence force field)", molecule.atom_count(),
                                             parsed.coordinates, parsed.terms);
}

}  // namespace
}  // namespace detail

std::unique_ptr<Potential> parse_valence_force_field(const std::string& toml_text, const std::string& origin,
                                                     const Molecule& molecule) {
  return detail::bind(detail::parse_file(toml_text, origin), origin, molecule);
}

std::unique_ptr<Potential> load_valence_force_field(const std::string& path, const Molecule& molecule) {
  return parse_valence_force_field(detail::read_text(path), path, molecule);
}

ValenceForceFieldSource read_valence_force_field_source(const std::string& path) {
  return parse_valence_force_field_source(detail::read_text(path), path);
}

ValenceForceFieldSource parse_valence_force_field_source(const std::string& toml_text,
                                                         const std::string& origin) {
  return detail::parse_file(toml_text, origin).source;
}

}  // namespace overtone
