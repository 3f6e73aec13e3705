#include "symmetry/point_group.hpp"

#include <algorithm>
#include <cctype>
#include <cmath>
#include <map>
#include <mutex>
#include <numeric>
#include <set>
#include <tuple>

#include "core/error.hpp"
#include "core/units.hpp"
#include "symmetry/geometry.hpp"

namespace overtone {
namespace {

using detail::improper_rotation_about;
using detail::reflection_through_plane;
using detail::rotation_about;

const Eigen::Vector3d x_axis(1, 0, 0), y_axis(0, 1, 0), z_axis(0, 0, 1);
// Exactly built matrices agree to ~1e-15; this separates elements and absorbs rounding.
constexpr double exact_tolerance = 1e-8;
// Largest denominator recognized in rotation angles (n up to 60 in S_2n, C_n).
constexpr int max_turn_denominator = 240;
constexpr int max_axis_order = 60;

bool is_axial(PointGroupFamily f) {
  switch (f) {
    case PointGroupFamily::Cn:
    case PointGroupFamily::Cnv:
    case PointGroupFamily::Cnh:
    case PointGroupFamily::Dn:
    case PointGroupFamily::Dnh:
    case PointGroupFamily::Dnd:
    case PointGroupFamily::S2n:
    case PointGroupFamily::Cinfv:
    case PointGroupFamily::Dinfh:
    case PointGroupFamily::Cs:
      return true;
    default:
      return false;
  }
}

bool is_dihedral_two(PointGroupFamily f, int n) {
  return (f == PointGroupFamily::Dn || f == PointGroupFamily::Dnh) && n == 2;
}

std::string name_for(PointGroupFamily f, int n, bool typographic) {
  auto num = [&](int k) {
    return typographic ? detail::subscript_digits(std::to_string(k)) : std::to_string(k);
  };
  switch (f) {
    case PointGroupFamily::C1:
      return typographic ? "C₁" : "C1";
    case PointGroupFamily::Cs:
      return "Cs";
    case PointGroupFamily::Ci:
      return "Ci";
    case PointGroupFamily::Cn:
      return "C" + num(n);
    case PointGroupFamily::Cnv:
      return "C" + num(n) + "v";
    case PointGroupFamily::Cnh:
      return "C" + num(n) + "h";
    case PointGroupFamily::Dn:
      return "D" + num(n);
    case PointGroupFamily::Dnh:
      return "D" + num(n) + "h";
    case PointGroupFamily::Dnd:
      return "D" + num(n) + "d";
    case PointGroupFamily::S2n:
      return "S" + num(n);
    case PointGroupFamily::T:
      return "T";
    case PointGroupFamily::Td:
      return "Td";
    case PointGroupFamily::Th:
      return "Th";
    case PointGroupFamily::O:
      return "O";
    case PointGroupFamily::Oh:
      return "Oh";
    case PointGroupFamily::I:
      return "I";
    case PointGroupFamily::Ih:
      return "Ih";
    case PointGroupFamily::Cinfv:
      return typographic ? "C∞v" : "Cinfv";
    case PointGroupFamily::Dinfh:
      return typographic ? "D∞h" : "Dinfh";
  }
  return "";
}

std::vector<Eigen::MatrixXd> generators_for(PointGroupFamily f, int n) {
  const double turn = 2.0 * units::pi;
  const double golden = (1.0 + std::sqrt(5.0)) / 2.0;
  const Eigen::Vector3d diagonal(1, 1, 1), five_fold(0, 1, golden);
  const Eigen::Matrix3d cn = rotation_about(z_axis, turn / n);
  const Eigen::Matrix3d c2x = rotation_about(x_axis, turn / 2);
  const Eigen::Matrix3d sigma_h = reflection_through_plane(z_axis);
  const Eigen::Matrix3d sigma_xz = reflection_through_plane(y_axis);
  const Eigen::Matrix3d inversion = -Eigen::Matrix3d::Identity();
  const Eigen::Matrix3d c3_diagonal = rotation_about(diagonal, turn / 3);
  std::vector<Eigen::Matrix3d> g;
  switch (f) {
    case PointGroupFamily::C1:
      g = {Eigen::Matrix3d::Identity()};
      break;
    case PointGroupFamily::Cs:
      g = {sigma_h};
      break;
    case PointGroupFamily::Ci:
      g = {inversion};
      break;
    case PointGroupFamily::Cn:
      g = {cn};
      break;
    case PointGroupFamily::Cnv:
    case PointGroupFamily::Cinfv:
      g = {cn, sigma_xz};
      break;
    case PointGroupFamily::Cnh:
      g = {cn, sigma_h};
      break;
    case PointGroupFamily::Dn:
      g = {cn, c2x};
      break;
    case PointGroupFamily::Dnh:
    case PointGroupFamily::Dinfh:
      g = {cn, c2x, sigma_h};
      break;
    case PointGroupFamily::Dnd:
      g = {improper_rotation_about(z_axis, turn / (2 * n)), c2x};
      break;
    case PointGroupFamily::S2n:
      g = {improper_rotation_about(z_axis, turn / n)};
      break;
    case PointGroupFamily::T:
      g = {rotation_about(z_axis, turn / 2), c3_diagonal};
      break;
    case PointGroupFamily::Td:
      g = {improper_rotation_about(z_axis, turn / 4), c3_diagonal};
      break;
    case PointGroupFamily::Th:
      g = {rotation_about(z_axis, turn / 2), c3_diagonal, inversion};
      break;
    case PointGroupFamily::O:
      g = {rotation_about(z_axis, turn / 4), c3_diagonal};
      break;
    case PointGroupFamily::Oh:
      g = {rotation_about(z_axis, turn / 4), c3_diagonal, inversion};
      break;
    case PointGroupFamily::I:
      g = {rotation_about(five_fold, turn / 5), c3_diagonal};
      break;
    case PointGroupFamily::Ih:
      g = {rotation_about(five_fold, turn / 5), c3_diagonal, inversion};
      break;
  }
  return std::vector<Eigen::MatrixXd>(g.begin(), g.end());
}

// Direction convention for naming senses of rotation: +z for axial axes; for body
// diagonals the direction with x·y·z > 0 (so that the two classes of threefold
// rotations of T are C3 and C3² consistently); otherwise the first nonzero of z, y, x positive.
Eigen::Vector3d canonical_direction(Eigen::Vector3d u) {
  constexpr double zero_component = 1e-9;
  if ((u.array().abs() > zero_component).all()) {
    if (u.x() * u.y() * u.z() < 0.0) u = -u;
    return u;
  }
  for (int i : {2, 1, 0}) {
    if (std::abs(u(i)) > zero_component) {
      if (u(i) < 0.0) u = -u;
      break;
    }
  }
  return u;
}

enum class OperationKind { Identity, Rotation, Inversion, Reflection, ImproperRotation };

struct OperationInfo {
  OperationKind kind = OperationKind::Identity;
  Eigen::Vector3d axis = Eigen::Vector3d::Zero();  // canonical direction
  int k = 0, m = 1;                                // C_m^k or S_m^k
  std::string decoration_ascii, decoration_text;   // "'", "(xz)", "v", "h", "d"
};

OperationInfo analyze_operation(const Eigen::Matrix3d& r) {
  OperationInfo info;
  const bool proper = r.determinant() > 0.0;
  if ((r - Eigen::Matrix3d::Identity()).cwiseAbs().maxCoeff() < exact_tolerance) return info;
  if ((r + Eigen::Matrix3d::Identity()).cwiseAbs().maxCoeff() < exact_tolerance) {
    info.kind = OperationKind::Inversion;
    return info;
  }
  Eigen::Vector3d axis;
  double angle = 0.0;
  detail::proper_axis_and_angle(r, axis, angle);
  info.axis = canonical_direction(axis);
  const Eigen::Matrix3d rotation_part = proper ? r : Eigen::Matrix3d(reflection_through_plane(info.axis) * r);
  const double turns = detail::signed_rotation_angle(rotation_part, info.axis) / (2.0 * units::pi);
  detail::rational_turns(turns, max_turn_denominator, info.k, info.m);
  if (info.m == 0) throw Error("internal: operation angle is not a rational fraction of a turn");
  if (proper) {
    info.kind = OperationKind::Rotation;
  } else if (info.k == 0) {
    info.kind = OperationKind::Reflection;
  } else {
    info.kind = OperationKind::ImproperRotation;
    // σh·C_m^k with m odd and k even is written S_m^{k+m} (odd power), as in S3⁵.
    if (info.m % 2 == 1 && info.k % 2 == 0) info.k += info.m;
  }
  return info;
}

std::string base_name(const OperationInfo& info, bool typographic) {
  auto sub = [&](int v) {
    return typographic ? detail::subscript_digits(std::to_string(v)) : std::to_string(v);
  };
  auto sup = [&](int v) {
    if (v == 1) return std::string();
    return typographic ? detail::superscript_digits(std::to_string(v)) : "^" + std::to_string(v);
  };
  switch (info.kind) {
    case OperationKind::Identity:
      return "E";
    case OperationKind::Inversion:
      return "i";
    case OperationKind::Rotation:
      return "C" + sub(info.m) + sup(info.k);
    case OperationKind::ImproperRotation:
      return "S" + sub(info.m) + sup(info.k);
    case OperationKind::Reflection:
      return typographic ? "σ" : "sigma";
  }
  return "";
}

bool parallel(const Eigen::Vector3d& a, const Eigen::Vector3d& b) {
  return std::abs(std::abs(a.normalized().dot(b.normalized())) - 1.0) < exact_tolerance;
}

std::string axis_letter(const Eigen::Vector3d& u) {
  if (parallel(u, x_axis)) return "x";
  if (parallel(u, y_axis)) return "y";
  return "z";
}

// Decorations that distinguish classes of the same kind (C2′/C2″, σv/σd/σh, axes of D2).
void decorate(PointGroupFamily family, int n, const std::vector<std::vector<int>>& classes,
              const FiniteGroup& group, std::vector<OperationInfo>& info) {
  const int c2x = group.find(rotation_about(x_axis, units::pi), exact_tolerance);
  const int sigma_xz = group.find(reflection_through_plane(y_axis), exact_tolerance);
  const bool cubic = !is_axial(family) && family != PointGroupFamily::C1 && family != PointGroupFamily::Ci;
  for (const auto& members : classes) {
    const bool has_c2x = std::find(members.begin(), members.end(), c2x) != members.end();
    const bool has_sigma_xz = std::find(members.begin(), members.end(), sigma_xz) != members.end();
    for (int a : members) {
      OperationInfo& op = info[a];
      auto set = [&](const std::string& ascii, const std::string& text) {
        op.decoration_ascii = ascii;
        op.decoration_text = text;
      };
      if (op.kind == OperationKind::Rotation && op.m == 2) {
        if (is_dihedral_two(family, n)) {
          set("(" + axis_letter(op.axis) + ")", "(" + axis_letter(op.axis) + ")");
        } else if (is_axial(family) && !parallel(op.axis, z_axis)) {
          if (has_c2x || family == PointGroupFamily::Dnd)
            set("'", "′");
          else
            set("''", "″");
        } else if ((family == PointGroupFamily::O || family == PointGroupFamily::Oh) &&
                   !parallel(op.axis, x_axis) && !parallel(op.axis, y_axis) && !parallel(op.axis, z_axis)) {
          set("'", "′");
        }
      } else if (op.kind == OperationKind::Reflection) {
        const Eigen::Vector3d& normal = op.axis;
        if (is_dihedral_two(family, n)) {
          const std::string plane = normal.isApprox(z_axis) || parallel(normal, z_axis) ? "(xy)"
                                    : parallel(normal, y_axis)                          ? "(xz)"
                                                                                        : "(yz)";
          set(plane, plane);
        } else if (family == PointGroupFamily::Cnv && n == 2) {
          if (parallel(normal, y_axis))
            set("_v(xz)", "v(xz)");
          else
            set("_v'(yz)", "v′(yz)");
        } else if (is_axial(family)) {
          if (parallel(normal, z_axis))
            set("_h", "h");
          else if (family == PointGroupFamily::Dnd)
            set("_d", "d");
          else if (has_sigma_xz)
            set("_v", "v");
          else
            set("_d", "d");
        } else if (cubic) {
          const bool coordinate_plane =
              parallel(normal, x_axis) || parallel(normal, y_axis) || parallel(normal, z_axis);
          if (family == PointGroupFamily::Td)
            set("_d", "d");
          else if (family == PointGroupFamily::Th || (family == PointGroupFamily::Oh && coordinate_plane))
            set("_h", "h");
          else if (family == PointGroupFamily::Oh)
            set("_d", "d");
        }
      }
    }
  }
}

// Sort key of a class (by its representative): E; rotations (principal axis first for
// axial groups, by angle; otherwise by order descending); then i, S_n, σh, σv, σd.
std::tuple<int, int, int, int, std::string> class_key(PointGroupFamily family, const OperationInfo& op) {
  const bool axial = is_axial(family);
  switch (op.kind) {
    case OperationKind::Identity:
      return {0, 0, 0, 0, ""};
    case OperationKind::Rotation: {
      const bool on_axis = axial && parallel(op.axis, z_axis);
      if (on_axis) return {1, 0, op.k * max_turn_denominator / op.m, 0, ""};
      const std::string& d = op.decoration_ascii;
      const std::string rank = d == "(y)" ? "1" : d == "(x)" ? "2" : d;  // C2(z), C2(y), C2(x)
      return {1, 1, -op.m, op.k, rank};
    }
    case OperationKind::Inversion:
      return {2, 0, 0, 0, ""};
    case OperationKind::ImproperRotation:
      return {3, 0, -op.m, op.k, ""};
    case OperationKind::Reflection: {
      const std::string& d = op.decoration_ascii;
      const int rank = d == "_h" || d == "(xy)"                    ? 0
                       : d == "_v" || d == "_v(xz)" || d == "(xz)" ? 1
                       : d == "_v'(yz)" || d == "(yz)"             ? 2
                       : d == "_d"                                 ? 3
                                                                   : 4;
      return {4, rank, 0, 0, d};
    }
  }
  return {5, 0, 0, 0, ""};
}

// ---- character table -------------------------------------------------------------

std::vector<std::vector<std::complex<double>>> irreducible_characters(
    const FiniteGroup& group, const std::vector<std::vector<int>>& classes) {
  const int r = static_cast<int>(classes.size());
  const int order = group.order();
  std::vector<int> class_of(order);
  for (int c = 0; c < r; ++c)
    for (int a : classes[c]) class_of[a] = c;
  // c[j](k, l) = number of (x, y) ∈ K_j × K_k with x·y equal to a fixed z ∈ K_l.
  std::vector<Eigen::MatrixXd> structure(r, Eigen::MatrixXd::Zero(r, r));
  for (int j = 0; j < r; ++j)
    for (int k = 0; k < r; ++k) {
      for (int x : classes[j])
        for (int y : classes[k]) structure[j](k, class_of[group.multiply(x, y)]) += 1.0;
      for (int l = 0; l < r; ++l) structure[j](k, l) /= static_cast<double>(classes[l].size());
    }
  // Central characters ω_k = |K_k|χ(g_k)/χ(1) are common eigenvectors of all c[j]; a
  // generic combination has simple eigenvalues. Fixed irrational coefficients; a second
  // set is tried if the first happens to produce a repeated eigenvalue.
  for (int attempt = 0; attempt < 4; ++attempt) {
    Eigen::MatrixXd combination = Eigen::MatrixXd::Zero(r, r);
    for (int j = 0; j < r; ++j) combination += std::sin(1.3 + 2.7 * j + 0.9 * attempt) * structure[j];
    Eigen::EigenSolver<Eigen::MatrixXd> solver(combination);
    const Eigen::MatrixXcd vectors = solver.eigenvectors();
    std::vector<std::vector<std::complex<double>>> table;
    bool valid = true;
    for (int i = 0; i < r && valid; ++i) {
      const std::complex<double> first = vectors(0, i);
      if (std::abs(first) < 1e-12) {
        valid = false;
        break;
      }
      Eigen::VectorXcd omega = vectors.col(i) / first;
      double norm = 0.0;
      for (int k = 0; k < r; ++k) norm += std::norm(omega(k)) / classes[k].size();
      const double degree = std::round(std::sqrt(order / norm));
      std::vector<std::complex<double>> row(r);
      for (int k = 0; k < r; ++k) row[k] = omega(k) * degree / static_cast<double>(classes[k].size());
      table.push_back(row);
    }
    // Check row orthonormality: Σ_k |K_k| χ_a(k) conj(χ_b(k)) = |G| δ_ab.
    constexpr double orthogonality_tolerance = 1e-6;
    for (int a = 0; a < r && valid; ++a)
      for (int b = 0; b < r && valid; ++b) {
        std::complex<double> sum = 0.0;
        for (int k = 0; k < r; ++k)
          sum += static_cast<double>(classes[k].size()) * table[a][k] * std::conj(table[b][k]);
        valid = std::abs(sum - (a == b ? static_cast<double>(order) : 0.0)) < orthogonality_tolerance * order;
      }
    if (valid) {
      // Clean rounding noise: exact zeros and real values where they are real.
      for (auto& row : table)
        for (auto& v : row) {
          if (std::abs(v.imag()) < 1e-10) v = {v.real(), 0.0};
          if (std::abs(v.real()) < 1e-10) v = {0.0, v.imag()};
        }
      return table;
    }
  }
  throw Error("internal: could not separate the irreducible characters of a group of order " +
              std::to_string(order));
}

struct LabelParts {
  std::string letter;  // A, B, E, T, G, H
  int number = 0;      // subscript; 0 for none
  int parity = 0;      // 0 none, 1 g, 2 u, 3 ′, 4 ″
  int lambda = -1;     // linear groups: Λ
  int sigma_sign = 0;  // linear Σ: +1 / −1
};

std::string letter_for_dimension(int d) {
  switch (d) {
    case 1:
      return "A";
    case 2:
      return "E";
    case 3:
      return "T";
    case 4:
      return "G";
    case 5:
      return "H";
  }
  return "X" + std::to_string(d);
}

int letter_rank(const std::string& letter) {
  static const std::string order = "ABETGH";
  const auto pos = order.find(letter);
  return pos == std::string::npos ? 10 : static_cast<int>(pos);
}

std::string linear_letter(int lambda, bool typographic) {
  static const char* ascii[] = {"Sigma", "Pi", "Delta", "Phi", "Gamma", "H", "I", "K"};
  static const char* text[] = {"Σ", "Π", "Δ", "Φ", "Γ", "Η", "Ι", "Κ"};
  if (lambda < 0 || lambda > 7) return "L" + std::to_string(lambda);
  return typographic ? text[lambda] : ascii[lambda];
}

}  // namespace

FiniteGroup PointGroup::finite_group() const {
  std::vector<Eigen::MatrixXd> matrices;
  std::vector<std::string> names;
  for (const auto& op : operations) {
    matrices.emplace_back(op.matrix);
    names.push_back(op.name);
  }
  return FiniteGroup::from_elements(matrices, names, exact_tolerance);
}

int PointGroup::irrep_index(const std::string& label) const {
  for (std::size_t k = 0; k < character_table.irreps.size(); ++k) {
    const Irrep& irrep = character_table.irreps[k];
    if (irrep.label == label || irrep.display_label == label) return static_cast<int>(k);
  }
  return -1;
}

namespace {
PointGroup build_point_group(PointGroupFamily family, int axis_order, int linear_axis_order);
}  // namespace

PointGroup make_point_group(PointGroupFamily family, int axis_order, int linear_axis_order) {
  // Building a table costs ~10 ms for Ih; detection asks for the same few groups again
  // and again, so finished groups are kept (read-only after insertion).
  static std::mutex mutex;
  static std::map<std::tuple<int, int, int>, PointGroup> cache;
  const bool linear = family == PointGroupFamily::Cinfv || family == PointGroupFamily::Dinfh;
  const auto key =
      std::make_tuple(static_cast<int>(family), linear ? 0 : axis_order, linear ? linear_axis_order : 0);
  {
    std::lock_guard<std::mutex> lock(mutex);
    const auto it = cache.find(key);
    if (it != cache.end()) return it->second;
  }
  PointGroup built = build_point_group(family, axis_order, linear_axis_order);
  std::lock_guard<std::mutex> lock(mutex);
  return cache.emplace(key, std::move(built)).first->second;
}

namespace {

// ---- Building a group: operations, classes, character table, labels ----------------

// n of the group after checking its range (the stand-in's m for linear groups, 1 where
// there is no axis order). Throws Error for an order out of range.
int checked_axis_order(PointGroupFamily family, int axis_order, int linear_axis_order) {
  const int n = axis_order;
  switch (family) {
    case PointGroupFamily::Cn:
    case PointGroupFamily::Cnv:
    case PointGroupFamily::Cnh:
    case PointGroupFamily::Dn:
    case PointGroupFamily::Dnh:
    case PointGroupFamily::Dnd:
      if (n < 2 || n > max_axis_order)
        throw Error("axis order of " + name_for(family, n, false) + " must be between 2 and " +
                    std::to_string(max_axis_order) + ", got " + std::to_string(n));
      return n;
    case PointGroupFamily::S2n:
      if (n < 4 || n % 2 != 0 || n > 2 * max_axis_order)
        throw Error("S_2n needs an even subscript between 4 and " + std::to_string(2 * max_axis_order) +
                    ", got " + std::to_string(n));
      return n;
    case PointGroupFamily::Cinfv:
    case PointGroupFamily::Dinfh:
      if (linear_axis_order < 4 || linear_axis_order % 2 != 0 || linear_axis_order > max_axis_order)
        throw Error("the finite stand-in for a linear group needs an even axis order between 4 and " +
                    std::to_string(max_axis_order) + ", got " + std::to_string(linear_axis_order));
      return linear_axis_order;
    default:
      return 1;
  }
}

// The operations of the finite group generated for the family, named and decorated, in
// textbook class order (operations within a class by their power), and the classes.
void build_operations(PointGroupFamily finite_family, int n, PointGroup& pg) {
  const FiniteGroup raw =
      FiniteGroup::generated_by(generators_for(finite_family, n), {}, exact_tolerance, 2000);
  std::vector<OperationInfo> info;
  for (int a = 0; a < raw.order(); ++a) info.push_back(analyze_operation(raw.matrix(a)));
  const auto raw_classes = raw.conjugacy_classes();
  decorate(finite_family, n, raw_classes, raw, info);

  std::vector<std::vector<int>> sorted_classes = raw_classes;
  for (auto& members : sorted_classes)
    std::sort(members.begin(), members.end(), [&](int a, int b) {
      return std::make_tuple(info[a].m, info[a].k, a) < std::make_tuple(info[b].m, info[b].k, b);
    });
  std::stable_sort(sorted_classes.begin(), sorted_classes.end(),
                   [&](const std::vector<int>& a, const std::vector<int>& b) {
                     return class_key(finite_family, info[a.front()]) <
                            class_key(finite_family, info[b.front()]);
                   });

  for (std::size_t c = 0; c < sorted_classes.size(); ++c) {
    std::vector<int> indices;
    for (int a : sorted_classes[c]) {
      SymmetryOperation op;
      op.matrix = raw.matrix(a);
      op.proper = op.matrix.determinant() > 0.0;
      op.axis = info[a].axis;
      op.class_index = static_cast<int>(c);
      op.name = base_name(info[a], true) + info[a].decoration_text;
      op.ascii_name = base_name(info[a], false) + info[a].decoration_ascii;
      indices.push_back(static_cast<int>(pg.operations.size()));
      pg.operations.push_back(op);
    }
    pg.classes.push_back(indices);
  }
}

// Class labels: size and the name of the lowest power, unless an earlier class took it.
void label_classes(PointGroup& pg) {
  CharacterTable& table = pg.character_table;
  std::vector<std::string> used_labels;
  for (const auto& members : pg.classes) {
    const int size = static_cast<int>(members.size());
    std::string text, ascii;
    for (int a : members) {
      const std::string candidate = pg.operations[a].ascii_name;
      if (std::find(used_labels.begin(), used_labels.end(), candidate) == used_labels.end()) {
        text = pg.operations[a].name;
        ascii = candidate;
        break;
      }
    }
    if (ascii.empty()) {
      text = pg.operations[members.front()].name;
      ascii = pg.operations[members.front()].ascii_name;
    }
    used_labels.push_back(ascii);
    const std::string count = size > 1 ? std::to_string(size) : "";
    table.class_labels.push_back(count + text);
    table.ascii_class_labels.push_back(count + ascii);
    table.class_sizes.push_back(size);
  }
}

// A real species before labelling: one complex row, or a merged complex-conjugate pair.
struct RawIrrep {
  std::vector<double> characters;
  int dimension;
  bool pair;
  std::vector<int> rows;
};

// Complex-conjugate pairs of rows merged into real species.
std::vector<RawIrrep> real_species(const std::vector<std::vector<std::complex<double>>>& complex_table) {
  constexpr double exact = 1e-8;  // characters from the class algebra are exact to ~1e-12
  std::vector<bool> taken(complex_table.size(), false);
  std::vector<RawIrrep> real_irreps;
  for (std::size_t a = 0; a < complex_table.size(); ++a) {
    if (taken[a]) continue;
    taken[a] = true;
    double imaginary = 0.0;
    for (const auto& v : complex_table[a]) imaginary = std::max(imaginary, std::abs(v.imag()));
    RawIrrep irrep;
    irrep.rows = {static_cast<int>(a)};
    irrep.pair = imaginary > exact;
    if (irrep.pair) {
      for (std::size_t b = a + 1; b < complex_table.size(); ++b) {
        if (taken[b]) continue;
        bool conjugate = true;
        for (std::size_t k = 0; k < complex_table[a].size(); ++k)
          conjugate = conjugate && std::abs(complex_table[b][k] - std::conj(complex_table[a][k])) < exact;
        if (conjugate) {
          taken[b] = true;
          irrep.rows.push_back(static_cast<int>(b));
          break;
        }
      }
      if (irrep.rows.size() != 2)
        throw Error("internal: complex irreducible character without its conjugate");
    }
    for (const auto& value : complex_table[a])
      irrep.characters.push_back(irrep.pair ? 2.0 * value.real() : value.real());
    irrep.dimension = static_cast<int>(std::lround(irrep.characters[0]));
    real_irreps.push_back(irrep);
  }
  return real_irreps;
}

// The operations Mulliken's rules look at (−1 where the group lacks them).
struct NamedOperations {
  int inversion = -1, sigma_h = -1, sigma_xz = -1, c2x = -1;
  int principal = -1, principal_order = 1;  // C_n (or S_2n when finer) about z in axial groups
  int cubic_reference = -1;                 // C4 (O, Oh), S4 (Td), C5 (I, Ih)
};

NamedOperations named_operations(const PointGroup& pg, const FiniteGroup& group,
                                 PointGroupFamily finite_family) {
  auto find_op = [&](const Eigen::Matrix3d& m) { return group.find(m, exact_tolerance); };
  const double turn = 2.0 * units::pi;
  NamedOperations named;
  named.inversion = find_op(-Eigen::Matrix3d::Identity());
  named.sigma_h = find_op(reflection_through_plane(z_axis));
  named.sigma_xz = find_op(reflection_through_plane(y_axis));
  named.c2x = find_op(rotation_about(x_axis, turn / 2));
  int proper_order = 1, improper_order = 0;
  for (const auto& op : pg.operations) {
    if (op.axis.isZero() || !parallel(op.axis, z_axis)) continue;
    OperationInfo i = analyze_operation(op.matrix);
    if (op.proper) proper_order = std::max(proper_order, i.m);
    if (!op.proper && i.kind == OperationKind::ImproperRotation)
      improper_order = std::max(improper_order, i.m);
  }
  if (is_axial(finite_family)) {
    if (named.inversion < 0 && improper_order > proper_order) {
      named.principal = find_op(improper_rotation_about(z_axis, turn / improper_order));
      named.principal_order = improper_order;
    } else if (proper_order > 1) {
      named.principal = find_op(rotation_about(z_axis, turn / proper_order));
      named.principal_order = proper_order;
    }
  }
  const double golden = (1.0 + std::sqrt(5.0)) / 2.0;
  if (finite_family == PointGroupFamily::O || finite_family == PointGroupFamily::Oh)
    named.cubic_reference = find_op(rotation_about(z_axis, turn / 4));
  else if (finite_family == PointGroupFamily::Td)
    named.cubic_reference = find_op(improper_rotation_about(z_axis, turn / 4));
  else if (finite_family == PointGroupFamily::I || finite_family == PointGroupFamily::Ih)
    named.cubic_reference = find_op(rotation_about(Eigen::Vector3d(0, 1, golden), turn / 5));
  return named;
}

// Letter, subscript, parity and (linear groups) Λ and Σ sign of one species by Mulliken's
// rules from its characters under the named operations.
LabelParts mulliken_parts(const RawIrrep& irrep, const std::vector<int>& class_of, const FiniteGroup& group,
                          const NamedOperations& named, PointGroupFamily finite_family, int n, bool linear) {
  auto chi = [&](int op) { return irrep.characters[class_of[op]]; };
  auto find_op = [&](const Eigen::Matrix3d& m) { return group.find(m, exact_tolerance); };
  const double turn = 2.0 * units::pi;
  const double d = irrep.dimension;
  LabelParts p;
  p.letter = letter_for_dimension(irrep.dimension);
  if (irrep.dimension == 1 && named.principal >= 0 && chi(named.principal) < 0.0) p.letter = "B";
  if (named.inversion >= 0)
    p.parity = chi(named.inversion) / d > 0.0 ? 1 : 2;
  else if (named.sigma_h >= 0)
    p.parity = chi(named.sigma_h) / d > 0.0 ? 3 : 4;
  if (is_dihedral_two(finite_family, n)) {
    // D2, D2h: A is symmetric under all three C2 (no subscript); B1, B2, B3 are
    // symmetric under C2(z), C2(y), C2(x) respectively.
    const double cz = chi(find_op(rotation_about(z_axis, turn / 2)));
    const double cy = chi(find_op(rotation_about(y_axis, turn / 2)));
    const double cx = chi(find_op(rotation_about(x_axis, turn / 2)));
    if (cz > 0 && cy > 0 && cx > 0) {
      p.letter = "A";
    } else {
      p.letter = "B";
      p.number = cz > 0 ? 1 : cy > 0 ? 2 : 3;
    }
  } else if (irrep.dimension == 1 && is_axial(finite_family) && (named.c2x >= 0 || named.sigma_xz >= 0)) {
    p.number = chi(named.c2x >= 0 ? named.c2x : named.sigma_xz) > 0.0 ? 1 : 2;
  } else if (irrep.dimension == 2 && is_axial(finite_family) && named.principal >= 0) {
    const double c = std::clamp(chi(named.principal) / 2.0, -1.0, 1.0);
    p.number = static_cast<int>(std::lround(std::acos(c) * named.principal_order / turn));
  } else if (named.cubic_reference >= 0 && (irrep.dimension == 1 || irrep.dimension == 3)) {
    if (finite_family == PointGroupFamily::I || finite_family == PointGroupFamily::Ih) {
      if (irrep.dimension == 3) p.number = chi(named.cubic_reference) > 0.0 ? 1 : 2;
    } else {
      p.number = chi(named.cubic_reference) / d > 0.0 ? 1 : 2;
    }
  }
  if (linear) {
    if (irrep.dimension == 1 && p.letter == "A") {
      p.lambda = 0;
      p.sigma_sign = chi(named.sigma_xz) > 0.0 ? 1 : -1;
    } else if (irrep.dimension == 2) {
      p.lambda = p.number;
    } else {
      p.lambda = n / 2;  // B-type species of the stand-in: the two halves of Λ = n/2
    }
  }
  return p;
}

std::string parity_suffix(int parity, bool typographic) {
  switch (parity) {
    case 1:
      return "g";
    case 2:
      return "u";
    case 3:
      return typographic ? "′" : "'";
    case 4:
      return typographic ? "″" : "''";
  }
  return "";
}

std::string mulliken_label(const LabelParts& p, bool typographic) {
  std::string label = p.letter;
  if (p.number > 0)
    label += typographic ? detail::subscript_digits(std::to_string(p.number)) : std::to_string(p.number);
  return label + parity_suffix(p.parity, typographic);
}

// Textbook order of the species: g before u, ′ before ″, then A, B, E, T, G, H, then
// subscript (linear groups: by Λ, Σ⁺ before Σ⁻).
std::vector<int> textbook_order(const std::vector<LabelParts>& parts, bool linear) {
  std::vector<int> sequence(parts.size());
  std::iota(sequence.begin(), sequence.end(), 0);
  std::sort(sequence.begin(), sequence.end(), [&](int a, int b) {
    const LabelParts &x = parts[a], &y = parts[b];
    const int px = x.parity % 2 == 0 && x.parity > 0 ? 1 : 0, py = y.parity % 2 == 0 && y.parity > 0 ? 1 : 0;
    if (linear)
      return std::make_tuple(px, x.lambda, -x.sigma_sign, x.number, x.letter) <
             std::make_tuple(py, y.lambda, -y.sigma_sign, y.number, y.letter);
    return std::make_tuple(px, letter_rank(x.letter), x.number) <
           std::make_tuple(py, letter_rank(y.letter), y.number);
  });
  return sequence;
}

// ASCII and typographic labels of a species (linear groups: Σ, Π, Δ, … with g/u and ±).
void name_species(const LabelParts& p, int dimension, bool linear, Irrep& irrep) {
  irrep.finite_label = mulliken_label(p, false);
  if (!linear) {
    irrep.label = irrep.finite_label;
    irrep.display_label = mulliken_label(p, true);
    return;
  }
  const std::string g_u = p.parity == 1 ? "g" : p.parity == 2 ? "u" : "";
  const std::string sign_ascii = p.lambda == 0 ? (p.sigma_sign > 0 ? "+" : "-") : "";
  const std::string sign_text = p.lambda == 0 ? (p.sigma_sign > 0 ? "⁺" : "⁻") : "";
  irrep.label = linear_letter(p.lambda, false) + (g_u.empty() ? "" : "_" + g_u) + sign_ascii;
  irrep.display_label = linear_letter(p.lambda, true) + g_u + sign_text;
  if (dimension == 1 && p.lambda != 0) {
    // One half of a Λ = n/2 species split by the finite stand-in.
    irrep.label += "(" + irrep.finite_label + ")";
    irrep.display_label += "(" + mulliken_label(p, true) + ")";
  }
}

// The Cartesian functions a species carries (x, y, z; Rx, Ry, Rz; quadratic functions) by
// projection with c·Σ_g χ(g)·D(g), c = (complex dimension)/|G|, and the IR and Raman
// activity that follows.
void cartesian_functions(const PointGroup& pg, const std::vector<int>& class_of, Irrep& irrep) {
  static const std::vector<std::pair<std::string, Eigen::Matrix3d>> quadratics = [] {
    auto sym = [](int i, int j) {
      Eigen::Matrix3d a = Eigen::Matrix3d::Zero();
      a(i, j) = a(j, i) = i == j ? 1.0 : 0.5;
      return a;
    };
    const Eigen::Matrix3d xx = sym(0, 0), yy = sym(1, 1), zz = sym(2, 2);
    return std::vector<std::pair<std::string, Eigen::Matrix3d>>{{"x²", xx},
                                                                {"y²", yy},
                                                                {"z²", zz},
                                                                {"x²+y²", xx + yy},
                                                                {"x²−y²", xx - yy},
                                                                {"x²+y²+z²", xx + yy + zz},
                                                                {"2z²−x²−y²", 2 * zz - xx - yy},
                                                                {"xy", sym(0, 1)},
                                                                {"xz", sym(0, 2)},
                                                                {"yz", sym(1, 2)}};
  }();
  static const std::vector<std::string> quadratic_display_order = {"x²+y²+z²",  "x²+y²", "x²", "y²", "z²",
                                                                   "2z²−x²−y²", "x²−y²", "xy", "xz", "yz"};
  constexpr double membership_tolerance = 1e-8;
  const int order = pg.order();
  const double weight =
      (irrep.complex_pair ? irrep.dimension / 2 : irrep.dimension) / static_cast<double>(order);
  Eigen::Matrix3d vector_projector = Eigen::Matrix3d::Zero(), axial_projector = Eigen::Matrix3d::Zero();
  for (int g = 0; g < order; ++g) {
    const Eigen::Matrix3d& r = pg.operations[g].matrix;
    const double c = irrep.characters[class_of[g]] * weight;
    vector_projector += c * r;
    axial_projector += c * r.determinant() * r;
  }
  const char* axes[] = {"x", "y", "z"};
  const char* rotation_names[] = {"Rx", "Ry", "Rz"};
  for (int i = 0; i < 3; ++i) {
    const Eigen::Vector3d e = Eigen::Vector3d::Unit(i);
    if ((vector_projector * e - e).norm() < membership_tolerance) irrep.linear_functions.push_back(axes[i]);
    if ((axial_projector * e - e).norm() < membership_tolerance) irrep.rotations.push_back(rotation_names[i]);
  }
  // Quadratic functions r·A·r transform as A → R·A·Rᵀ.
  std::vector<Eigen::VectorXd> kept;
  std::vector<std::string> kept_names;
  for (const auto& [label, a_matrix] : quadratics) {
    Eigen::Matrix3d projected = Eigen::Matrix3d::Zero();
    for (int g = 0; g < order; ++g) {
      const Eigen::Matrix3d& r = pg.operations[g].matrix;
      projected += irrep.characters[class_of[g]] * weight * r * a_matrix * r.transpose();
    }
    if ((projected - a_matrix).norm() > membership_tolerance) continue;
    Eigen::VectorXd v(6);
    v << a_matrix(0, 0), a_matrix(1, 1), a_matrix(2, 2), a_matrix(0, 1), a_matrix(0, 2), a_matrix(1, 2);
    Eigen::VectorXd residual = v;
    for (const auto& u : kept) residual -= u.dot(residual) * u;
    if (residual.norm() < 1e-6) continue;
    kept.push_back(residual.normalized());
    kept_names.push_back(label);
  }
  for (const auto& label : quadratic_display_order)
    if (std::find(kept_names.begin(), kept_names.end(), label) != kept_names.end())
      irrep.quadratic_functions.push_back(label);
  irrep.ir_active = !irrep.linear_functions.empty();
  irrep.raman_active = !irrep.quadratic_functions.empty();
}

// The character table: irreducible characters from the class algebra, conjugate pairs
// merged, Mulliken labels, textbook order, Cartesian functions and activity.
void build_character_table(PointGroupFamily finite_family, int n, PointGroup& pg) {
  CharacterTable& table = pg.character_table;
  const FiniteGroup group = pg.finite_group();
  const auto complex_table = irreducible_characters(group, pg.classes);
  std::vector<int> class_of(group.order());
  for (std::size_t c = 0; c < pg.classes.size(); ++c)
    for (int a : pg.classes[c]) class_of[a] = static_cast<int>(c);
  const std::vector<RawIrrep> real_irreps = real_species(complex_table);
  const NamedOperations named = named_operations(pg, group, finite_family);
  std::vector<LabelParts> parts;
  for (const RawIrrep& irrep : real_irreps)
    parts.push_back(mulliken_parts(irrep, class_of, group, named, finite_family, n, pg.linear));
  // E numbering only where more than one two-dimensional species shares the parity.
  for (std::size_t a = 0; a < parts.size(); ++a) {
    if (parts[a].letter != "E" || !is_axial(finite_family)) continue;
    int same = 0;
    for (std::size_t b = 0; b < parts.size(); ++b)
      same += parts[b].letter == "E" && parts[b].parity == parts[a].parity;
    if (same < 2 && !pg.linear) parts[a].number = 0;
  }
  for (int a : textbook_order(parts, pg.linear)) {
    const RawIrrep& raw_irrep = real_irreps[a];
    Irrep irrep;
    name_species(parts[a], raw_irrep.dimension, pg.linear, irrep);
    irrep.dimension = raw_irrep.dimension;
    irrep.complex_pair = raw_irrep.pair;
    irrep.characters = raw_irrep.characters;
    table.complex_rows.push_back({});
    for (int row : raw_irrep.rows) {
      table.complex_rows.back().push_back(static_cast<int>(table.complex_characters.size()));
      table.complex_characters.push_back(complex_table[row]);
    }
    cartesian_functions(pg, class_of, irrep);
    table.irreps.push_back(irrep);
  }
}

PointGroup build_point_group(PointGroupFamily family, int axis_order, int linear_axis_order) {
  const int n = checked_axis_order(family, axis_order, linear_axis_order);
  const PointGroupFamily finite_family = family == PointGroupFamily::Cinfv   ? PointGroupFamily::Cnv
                                         : family == PointGroupFamily::Dinfh ? PointGroupFamily::Dnh
                                                                             : family;
  PointGroup pg;
  pg.family = family;
  pg.axis_order = n;
  pg.linear = family == PointGroupFamily::Cinfv || family == PointGroupFamily::Dinfh;
  pg.name = name_for(family, n, false);
  pg.display_name = name_for(family, n, true);
  pg.finite_name = name_for(finite_family, n, false);
  build_operations(finite_family, n, pg);
  label_classes(pg);
  build_character_table(finite_family, n, pg);
  return pg;
}

}  // namespace

PointGroup make_point_group(const std::string& name, int linear_axis_order) {
  static const std::map<std::string, PointGroupFamily> fixed = {
      {"C1", PointGroupFamily::C1},       {"Cs", PointGroupFamily::Cs},
      {"Ci", PointGroupFamily::Ci},       {"T", PointGroupFamily::T},
      {"Td", PointGroupFamily::Td},       {"Th", PointGroupFamily::Th},
      {"O", PointGroupFamily::O},         {"Oh", PointGroupFamily::Oh},
      {"I", PointGroupFamily::I},         {"Ih", PointGroupFamily::Ih},
      {"Cinfv", PointGroupFamily::Cinfv}, {"Dinfh", PointGroupFamily::Dinfh},
      {"C∞v", PointGroupFamily::Cinfv},   {"D∞h", PointGroupFamily::Dinfh}};
  const auto it = fixed.find(name);
  if (it != fixed.end()) return make_point_group(it->second, 1, linear_axis_order);
  const auto unknown = [&] {
    return Error("unknown point group '" + name +
                 "', expected a Schoenflies name such as C2v, D6h, S4, Td, Oh, Ih, Cinfv or Dinfh");
  };
  if (name.size() < 2 || (name[0] != 'C' && name[0] != 'D' && name[0] != 'S')) throw unknown();
  std::size_t end = 1;
  while (end < name.size() && std::isdigit(static_cast<unsigned char>(name[end]))) ++end;
  if (end == 1 || end - 1 > 3) throw unknown();
  const int n = std::stoi(name.substr(1, end - 1));
  const std::string suffix = name.substr(end);
  if (name[0] == 'S' && suffix.empty()) return make_point_group(PointGroupFamily::S2n, n);
  if (name[0] == 'C') {
    if (n == 1 && suffix.empty()) return make_point_group(PointGroupFamily::C1);
    if (n == 1 && suffix == "h") return make_point_group(PointGroupFamily::Cs);
    if (suffix.empty()) return make_point_group(PointGroupFamily::Cn, n);
    if (suffix == "v") return make_point_group(PointGroupFamily::Cnv, n);
    if (suffix == "h") return make_point_group(PointGroupFamily::Cnh, n);
  }
  if (name[0] == 'D') {
    if (suffix.empty()) return make_point_group(PointGroupFamily::Dn, n);
    if (suffix == "h") return make_point_group(PointGroupFamily::Dnh, n);
    if (suffix == "d") return make_point_group(PointGroupFamily::Dnd, n);
  }
  throw unknown();
}

std::vector<double> reduce_representation(const PointGroup& group, const std::vector<double>& characters) {
  if (static_cast<int>(characters.size()) != group.order())
    throw Error("representation has " + std::to_string(characters.size()) +
                " characters, expected one per operation (" + std::to_string(group.order()) + ")");
  std::vector<double> multiplicities;
  for (const auto& irrep : group.character_table.irreps) {
    double overlap = 0.0, norm = 0.0;
    for (int g = 0; g < group.order(); ++g) {
      const double chi = irrep.characters[group.operations[g].class_index];
      overlap += characters[g] * chi;
      norm += chi * chi;
    }
    multiplicities.push_back(overlap / norm);
  }
  return multiplicities;
}

std::string format_decomposition(const PointGroup& group, const std::vector<int>& multiplicities,
                                 bool typographic) {
  std::string text;
  for (std::size_t k = 0; k < multiplicities.size() && k < group.character_table.irreps.size(); ++k) {
    if (multiplicities[k] == 0) continue;
    if (!text.empty()) text += " + ";
    if (multiplicities[k] != 1) text += std::to_string(multiplicities[k]);
    const Irrep& irrep = group.character_table.irreps[k];
    text += typographic ? irrep.display_label : irrep.label;
  }
  return text.empty() ? "0" : text;
}

}  // namespace overtone
