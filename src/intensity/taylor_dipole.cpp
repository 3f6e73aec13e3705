#include "intensity/taylor_dipole.hpp"

#include <fmt/format.h>
#include <toml++/toml.h>

#include <algorithm>
#include <cmath>

#include "core/error.hpp"
#include "core/units.hpp"
#include "harmonic/normal_coordinates.hpp"
#include "potential/detail_toml_text.hpp"

namespace overtone {

namespace {

// Largest |dipole derivative| accepted, e·Å per unit q: molecular values stay below ~1
// (common practice, no source); beyond 1e3 a number is a slip.
constexpr double max_dipole_term = 1e3;

double dipole_unit(const std::string& unit, const std::string& where) {
  if (unit == "e*angstrom") return 1.0;
  if (unit == "debye") return 1.0 / units::debye_per_e_angstrom;
  if (unit == "atomic") return units::angstrom_per_bohr;  // e·a₀
  throw Error(where + ": key 'dipole.units' must be \"e*angstrom\", \"debye\" or \"atomic\", got \"" + unit +
              "\"");
}

void read_terms(const toml::table& table, const char* key, int order, int mode_count, double scale,
                const std::string& where, std::vector<DipoleSurfaceTerms::Term>& out) {
  const toml::node* node = table.get(key);
  if (node == nullptr) return;
  const toml::array* rows = node->as_array();
  if (rows == nullptr) throw Error(fmt::format("{}: key 'dipole.{}' must be an array", where, key));
  for (const toml::node& entry : *rows) {
    const toml::array* row = entry.as_array();
    if (row == nullptr || static_cast<int>(row->size()) != order + 3)
      throw Error(fmt::format("{}: entries of 'dipole.{}' must be [{} indices, x, y, z]", where, key, order));
    DipoleSurfaceTerms::Term term;
    for (int i = 0; i < order; ++i) {
      const auto index = row->get(static_cast<std::size_t>(i))->value<int64_t>();
      if (!index || *index < 1 || *index > mode_count)
        throw Error(fmt::format("{}: 'dipole.{}' has an index outside 1..{}", where, key, mode_count));
      term.modes.push_back(static_cast<int>(*index) - 1);
    }
    for (int c = 0; c < 3; ++c) {
      const auto value = row->get(static_cast<std::size_t>(order + c))->value<double>();
      if (!value || !std::isfinite(*value) || std::abs(*value * scale) > max_dipole_term)
        throw Error(fmt::format("{}: 'dipole.{}' values must be finite numbers of magnitude at most {}",
                                where, key, max_dipole_term));
      term.value[c] = *value * scale;
    }
    std::sort(term.modes.begin(), term.modes.end());
    if (order == 3 && !(term.modes[0] == term.modes[2]))
      throw Error(fmt::format("{}: 'dipole.third' lists diagonal terms [k, k, k, ...] only", where));
    out.push_back(term);
  }
}

}  // namespace

DipoleSurfaceTerms parse_dipole_surface(const std::string& toml_text, const std::string& origin,
                                        int mode_count) {
  const std::string where = "taylor-expansion file '" + origin + "'";
  detail::check_toml_text(toml_text, where);
  toml::table root;
  try {
    root = toml::parse(toml_text, origin);
  } catch (const toml::parse_error& e) {
    throw Error(fmt::format("{} line {}: malformed TOML: {}", where, e.source().begin.line, e.description()));
  }
  DipoleSurfaceTerms terms;
  const toml::node* node = root.get("dipole");
  if (node == nullptr) return terms;
  const toml::table* table = node->as_table();
  if (table == nullptr) throw Error(where + ": key 'dipole' must be a table ([dipole])");
  for (const auto& [key, value] : *table)
    if (key.str() != "units" && key.str() != "first" && key.str() != "second" && key.str() != "third" &&
        key.str() != "permanent")
      throw Error(where + ": unknown key 'dipole." + std::string(key.str()) + "'");
  const double scale =
      dipole_unit(table->get("units") ? table->get("units")->value_or(std::string()) : "e*angstrom", where);
  read_terms(*table, "first", 1, mode_count, scale, where, terms.first);
  read_terms(*table, "second", 2, mode_count, scale, where, terms.second);
  read_terms(*table, "third", 3, mode_count, scale, where, terms.third);
  if (const toml::array* permanent =
          table->get("permanent") ? table->get("permanent")->as_array() : nullptr) {
    if (permanent->size() != 3) throw Error(where + ": 'dipole.permanent' must be [x, y, z]");
    Eigen::Vector3d mu;
    for (int c = 0; c < 3; ++c) mu[c] = permanent->get(static_cast<std::size_t>(c))->value_or(0.0) * scale;
    terms.dipole_e_angstrom = mu;
  }
  return terms;
}

TaylorDipole::TaylorDipole(const TaylorExpansionData& expansion, DipoleSurfaceTerms terms,
                           const Molecule& molecule, std::string origin)
    : reference_(expansion.reference_angstrom), terms_(std::move(terms)), origin_(std::move(origin)) {
  if (expansion.coordinates != ExpansionCoordinates::normal)
    throw Error("taylor-expansion file '" + origin_ +
                "': dipole surface terms need coordinates = \"normal\"");
  if (terms_.first.empty())
    throw Error("taylor-expansion file '" + origin_ + "': the [dipole] table lists no first derivatives");
  if (expansion.atomic_numbers.size() != molecule.atom_count())
    throw Error(fmt::format("taylor-expansion file '{}' is for {} atoms, the molecule has {}", origin_,
                            expansion.atomic_numbers.size(), molecule.atom_count()));
  const Eigen::Index n = reference_.size(), m = expansion.frequencies_cm1.size();
  Eigen::VectorXd sqrt_mass(n);
  for (Eigen::Index r = 0; r < n; ++r) sqrt_mass[r] = std::sqrt(expansion.masses_da[r / 3]);
  Eigen::MatrixXd l = sqrt_mass.asDiagonal() * expansion.mode_displacements;
  for (Eigen::Index k = 0; k < m; ++k) l.col(k).normalize();
  const Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> gram(l.transpose() * l);
  l = l * gram.operatorInverseSqrt();  // the nearest orthonormal set, as the potential does
  to_normal_.resize(m, n);
  for (Eigen::Index k = 0; k < m; ++k) {
    const double omega = expansion.frequencies_cm1[k] / units::cm1_per_internal_angular_frequency;
    to_normal_.row(k) =
        std::sqrt(omega / units::hbar_internal) * (sqrt_mass.asDiagonal() * l.col(k)).transpose();
  }
}

std::string TaylorDipole::notes() const {
  return "dipole surface terms of the Taylor expansion in its normal coordinates (first" +
         std::string(terms_.second.empty() ? "" : " and second") +
         " derivatives), rotated onto the analysed geometry; no polarizability: no Raman activities";
}

Eigen::MatrixXd TaylorDipole::dipole_derivatives(const Eigen::VectorXd& coordinates_angstrom) const {
  check_size(coordinates_angstrom);
  const Eigen::Matrix3d r = best_rotation(reference_, coordinates_angstrom);
  Eigen::MatrixXd p = Eigen::MatrixXd::Zero(3, reference_.size());
  for (const auto& term : terms_.first) p += term.value * to_normal_.row(term.modes[0]);
  // μ' = R μ and x' = R x per atom: P' = R P (R ⊗ 1)ᵀ.
  Eigen::MatrixXd rotated(3, p.cols());
  for (Eigen::Index a = 0; a < p.cols() / 3; ++a)
    rotated.block(0, 3 * a, 3, 3) = r * p.block(0, 3 * a, 3, 3) * r.transpose();
  return rotated;
}

std::optional<Eigen::Vector3d> TaylorDipole::dipole(const Eigen::VectorXd& /*coordinates_angstrom*/) const {
  // The surface terms describe vibrations only (no response to rigid rotations), so the
  // permanent dipole is not offered: Crawford's rotational correction would not apply.
  return std::nullopt;
}

std::array<Eigen::MatrixXd, 3> TaylorDipole::dipole_second_derivatives(
    const Eigen::VectorXd& coordinates_angstrom) const {
  check_size(coordinates_angstrom);
  const Eigen::Matrix3d r = best_rotation(reference_, coordinates_angstrom);
  const Eigen::Index n = reference_.size();
  std::array<Eigen::MatrixXd, 3> file_frame = {Eigen::MatrixXd::Zero(n, n), Eigen::MatrixXd::Zero(n, n),
                                               Eigen::MatrixXd::Zero(n, n)};
  for (const auto& term : terms_.second) {
    const Eigen::MatrixXd outer = to_normal_.row(term.modes[0]).transpose() * to_normal_.row(term.modes[1]);
    // Each unordered pair is listed once: ½ Σ_kl μ_kl q_k q_l needs both orders.
    const Eigen::MatrixXd pair =
        term.modes[0] == term.modes[1] ? outer : Eigen::MatrixXd(outer + outer.transpose());
    for (int c = 0; c < 3; ++c) file_frame[static_cast<std::size_t>(c)] += term.value[c] * pair;
  }
  Eigen::MatrixXd block = Eigen::MatrixXd::Zero(n, n);  // R on every atom
  for (Eigen::Index a = 0; a < n / 3; ++a) block.block(3 * a, 3 * a, 3, 3) = r;
  std::array<Eigen::MatrixXd, 3> rotated = {Eigen::MatrixXd::Zero(n, n), Eigen::MatrixXd::Zero(n, n),
                                            Eigen::MatrixXd::Zero(n, n)};
  for (int a = 0; a < 3; ++a)
    for (int b = 0; b < 3; ++b)
      rotated[static_cast<std::size_t>(a)] +=
          r(a, b) * block * file_frame[static_cast<std::size_t>(b)] * block.transpose();
  return rotated;
}

std::string dipole_surface_text(const HarmonicResult& harmonic, const DipoleSource& source) {
  const detail::NormalCoordinateFrame frame(harmonic);
  const Eigen::MatrixXd first = source.dipole_derivatives(harmonic.coordinates_angstrom) * frame.to_cartesian;
  std::string out =
      "\n# Dipole surface in the normal coordinates above: " + source.description() +
      "\n# first = [k, dmu_x/dq_k, dmu_y/dq_k, dmu_z/dq_k] in e*angstrom\n[dipole]\nunits = \"e*angstrom\"\n";
  if (const auto mu = source.dipole(harmonic.coordinates_angstrom))
    out += fmt::format("permanent = [{:.17g}, {:.17g}, {:.17g}]\n", (*mu)[0], (*mu)[1], (*mu)[2]);
  out += "first = [\n";
  for (Eigen::Index k = 0; k < first.cols(); ++k)
    out += fmt::format("  [{}, {:.17g}, {:.17g}, {:.17g}],\n", k + 1, first(0, k), first(1, k), first(2, k));
  return out + "]\n";
}

}  // namespace overtone
