#include "symmetry/detect_point_group.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <map>
#include <numeric>
#include <sstream>

#include "core/error.hpp"
#include "core/units.hpp"
#include "harmonic/inertia.hpp"
#include "symmetry/geometry.hpp"

namespace overtone {

void SymmetryOptions::validate() const {
  if (!(tolerance_angstrom > 0.0) || !(tolerance_angstrom <= max_symmetry_tolerance_angstrom))
    throw Error(fmt::format("the symmetry tolerance must lie in (0, {}] Å, got {} Å",
                            max_symmetry_tolerance_angstrom, tolerance_angstrom));
  if (!(mass_tolerance_da >= 0.0) || !std::isfinite(mass_tolerance_da))
    throw Error("SymmetryOptions::mass_tolerance_da must be non-negative, got " +
                std::to_string(mass_tolerance_da));
  if (linear_axis_order < 4 || linear_axis_order > 60 || linear_axis_order % 2 != 0)
    throw Error("SymmetryOptions::linear_axis_order must be even and between 4 and 60, got " +
                std::to_string(linear_axis_order));
}

Eigen::Matrix3d PointGroupResult::operation_matrix(int g, CoordinateFrame frame) const {
  if (g < 0 || g >= group.order())
    throw Error("operation index " + std::to_string(g) + " is outside the group of order " +
                std::to_string(group.order()));
  const Eigen::Matrix3d& r = group.operations[g].matrix;
  if (frame == CoordinateFrame::Symmetry) return r;
  return symmetry_from_file.transpose() * r * symmetry_from_file;
}

namespace {

using Points = std::vector<Eigen::Vector3d>;

// A symmetry operation found on the input geometry (centred, input axes), fitted to
// all atoms; identified by its atom permutation and determinant, which compose exactly.
struct FittedOperation {
  Eigen::Matrix3d matrix;
  std::vector<int> permutation;
  int determinant = 1;
  double deviation = 0.0;  // largest |R·r_i − r_π(i)|, Å
};

using OperationKey = std::pair<int, std::vector<int>>;

OperationKey key_of(const FittedOperation& op) { return {op.determinant, op.permutation}; }

struct Geometry {
  Points points;              // centred at the centre of mass
  std::vector<int> class_of;  // equivalence class: same element, mass and distance from the centre
  std::vector<std::vector<int>> classes;
  Eigen::VectorXd masses;
  Eigen::Matrix3d inertia = Eigen::Matrix3d::Zero();  // about the centre of mass
};

Geometry classify_atoms(const Points& points, const std::vector<int>& atomic_numbers,
                        const Eigen::VectorXd& masses, double tolerance, double mass_tolerance) {
  Geometry g;
  g.points = points;
  g.masses = masses;
  const int n = static_cast<int>(points.size());
  std::vector<int> order(n);
  std::iota(order.begin(), order.end(), 0);
  std::sort(order.begin(), order.end(), [&](int a, int b) {
    return std::make_tuple(atomic_numbers[a], masses[a], points[a].norm()) <
           std::make_tuple(atomic_numbers[b], masses[b], points[b].norm());
  });
  g.class_of.assign(n, -1);
  // Equivalent atoms of a geometry within the tolerance of a symmetric one have
  // distances from the centre within 2·tolerance; consecutive gaps larger than that
  // separate classes (chains of small gaps merge, which only costs speed).
  for (int k = 0; k < n; ++k) {
    const int a = order[k];
    bool same = false;
    if (k > 0) {
      const int b = order[k - 1];
      same = atomic_numbers[a] == atomic_numbers[b] && std::abs(masses[a] - masses[b]) <= mass_tolerance &&
             points[a].norm() - points[b].norm() <= 2.0 * tolerance;
    }
    if (!same) g.classes.emplace_back();
    g.classes.back().push_back(a);
    g.class_of[a] = static_cast<int>(g.classes.size()) - 1;
  }
  for (auto& c : g.classes) std::sort(c.begin(), c.end());
  return g;
}

// Nearest equivalent atom for every atom under r; empty when an atom has no partner
// within its threshold or two atoms claim the same partner.
std::vector<int> match_atoms(const Geometry& geometry, const Eigen::Matrix3d& r, double base_threshold,
                             double threshold_per_angstrom, double* largest = nullptr) {
  const int n = static_cast<int>(geometry.points.size());
  std::vector<int> permutation(n, -1);
  std::vector<char> used(n, 0);
  double worst = 0.0;
  for (int i = 0; i < n; ++i) {
    const Eigen::Vector3d image = r * geometry.points[i];
    const double threshold = base_threshold + threshold_per_angstrom * geometry.points[i].norm();
    double best = threshold * threshold;
    int partner = -1;
    for (int j : geometry.classes[geometry.class_of[i]]) {
      const double d = (image - geometry.points[j]).squaredNorm();
      if (d <= best) {
        best = d;
        partner = j;
      }
    }
    if (partner < 0 || used[partner]) return {};
    used[partner] = 1;
    permutation[i] = partner;
    worst = std::max(worst, std::sqrt(best));
  }
  if (largest) *largest = worst;
  return permutation;
}

double largest_deviation(const Geometry& geometry, const Eigen::Matrix3d& r,
                         const std::vector<int>& permutation) {
  double worst = 0.0;
  for (std::size_t i = 0; i < geometry.points.size(); ++i)
    worst = std::max(worst, (r * geometry.points[i] - geometry.points[permutation[i]]).norm());
  return worst;
}

Eigen::Matrix3d fit_operation(const Geometry& geometry, const std::vector<int>& permutation,
                              int determinant) {
  Eigen::Matrix3d covariance = Eigen::Matrix3d::Zero();
  for (std::size_t i = 0; i < geometry.points.size(); ++i)
    covariance += geometry.points[permutation[i]] * geometry.points[i].transpose();
  return detail::orthogonal_procrustes(covariance, determinant);
}

Eigen::Matrix3d frame_of(const Eigen::Vector3d& a, const Eigen::Vector3d& b, int handedness) {
  Eigen::Matrix3d f;
  const Eigen::Vector3d e1 = a.normalized();
  const Eigen::Vector3d e2 = (b - b.dot(e1) * e1).normalized();
  f.col(0) = e1;
  f.col(1) = e2;
  f.col(2) = handedness * e1.cross(e2);
  return f;
}

// All operations of the geometry within 2·tolerance per atom.
std::vector<FittedOperation> find_operations(const Geometry& geometry, double tolerance, int& tested) {
  const int n = static_cast<int>(geometry.points.size());
  const double acceptance = 2.0 * tolerance;
  // Atoms this close to the centre fix no direction.
  const double minimum_radius = acceptance + 1e-3;
  std::vector<FittedOperation> found;
  std::map<OperationKey, int> index;
  auto add = [&](const FittedOperation& op) {
    if (index.emplace(key_of(op), static_cast<int>(found.size())).second) found.push_back(op);
  };
  FittedOperation identity;
  identity.matrix = Eigen::Matrix3d::Identity();
  identity.permutation.resize(n);
  std::iota(identity.permutation.begin(), identity.permutation.end(), 0);
  add(identity);

  // Reference atom a: the smallest class well away from the centre (ties: farther
  // out); a short lever would make the two-atom frame imprecise.
  double outermost = 0.0;
  for (const auto& p : geometry.points) outermost = std::max(outermost, p.norm());
  const double lever_radius = std::max(minimum_radius, 0.3 * outermost);
  int a = -1;
  for (int i = 0; i < n; ++i) {
    if (geometry.points[i].norm() < lever_radius) continue;
    if (a < 0) {
      a = i;
      continue;
    }
    const auto size_i = geometry.classes[geometry.class_of[i]].size();
    const auto size_a = geometry.classes[geometry.class_of[a]].size();
    if (size_i < size_a ||
        (size_i == size_a && geometry.points[i].norm() > geometry.points[a].norm() + acceptance))
      a = i;
  }
  if (a < 0) return found;
  const Eigen::Vector3d axis_a = geometry.points[a].normalized();
  auto perpendicular = [&](int i) {
    return (geometry.points[i] - geometry.points[i].dot(axis_a) * axis_a).norm();
  };
  double widest = 0.0;
  for (int i = 0; i < n; ++i) widest = std::max(widest, perpendicular(i));
  // Nearly linear but not within the tolerance: the small bend still fixes the frame.
  constexpr double kCollinear = 1e-6;
  if (widest <= kCollinear) return found;
  // Reference atom b: off the line through a, few candidate image pairs, far from that line.
  const auto& class_a = geometry.classes[geometry.class_of[a]];
  int b = -1;
  std::size_t best_count = 0;
  for (int i = 0; i < n; ++i) {
    if (i == a || perpendicular(i) < 0.5 * widest) continue;
    const double distance = (geometry.points[i] - geometry.points[a]).norm();
    std::size_t count = 0;
    for (int ap : class_a)
      for (int bp : geometry.classes[geometry.class_of[i]])
        count += bp != ap &&
                 std::abs((geometry.points[bp] - geometry.points[ap]).norm() - distance) <= 2 * acceptance;
    if (b < 0 || count < best_count || (count == best_count && perpendicular(i) > perpendicular(b))) {
      b = i;
      best_count = count;
    }
  }
  const double reference_distance = (geometry.points[b] - geometry.points[a]).norm();
  const double lever = std::min(geometry.points[a].norm(), perpendicular(b));
  // A two-atom frame is uncertain by about acceptance/lever radians; the coarse match
  // allows for it before the fit to all atoms removes it.
  const double coarse_base = 2.0 * acceptance + 0.1;
  const double coarse_per_angstrom = 4.0 * acceptance / lever;
  for (int handedness : {1, -1}) {
    const Eigen::Matrix3d reference = frame_of(geometry.points[a], geometry.points[b], 1);
    for (int ap : class_a) {
      for (int bp : geometry.classes[geometry.class_of[b]]) {
        if (bp == ap || std::abs((geometry.points[bp] - geometry.points[ap]).norm() - reference_distance) >
                            2 * acceptance)
          continue;
        const Eigen::Vector3d axis_ap = geometry.points[ap].normalized();
        if ((geometry.points[bp] - geometry.points[bp].dot(axis_ap) * axis_ap).norm() <
            0.5 * perpendicular(b))
          continue;
        ++tested;
        const Eigen::Matrix3d image = frame_of(geometry.points[ap], geometry.points[bp], handedness);
        const Eigen::Matrix3d guess = image * reference.transpose();
        std::vector<int> permutation = match_atoms(geometry, guess, coarse_base, coarse_per_angstrom);
        if (permutation.empty()) continue;
        FittedOperation op;
        op.determinant = handedness;
        op.matrix = fit_operation(geometry, permutation, handedness);
        // The fit may change the nearest partners; re-match strictly with the fitted matrix.
        permutation = match_atoms(geometry, op.matrix, acceptance, 0.0);
        if (permutation.empty()) continue;
        op.matrix = fit_operation(geometry, permutation, handedness);
        op.permutation = permutation;
        op.deviation = largest_deviation(geometry, op.matrix, permutation);
        if (op.deviation <= acceptance) add(op);
      }
    }
  }
  return found;
}

std::vector<int> compose(const std::vector<int>& first_applied_second, const std::vector<int>& second) {
  // (A·B) moves atom i to π_A(π_B(i)).
  std::vector<int> result(second.size());
  for (std::size_t i = 0; i < second.size(); ++i) result[i] = first_applied_second[second[i]];
  return result;
}

// Closes the set under composition: products that are missing are fitted and checked;
// when a product fails, the operation with the largest deviation is dropped (with its
// inverse) until the set is a group.
std::vector<FittedOperation> close_operations(const Geometry& geometry, std::vector<FittedOperation> ops,
                                              double acceptance, std::vector<std::string>& notes) {
  for (int round = 0; round < 1000; ++round) {
    std::map<OperationKey, int> index;
    for (std::size_t k = 0; k < ops.size(); ++k) index[key_of(ops[k])] = static_cast<int>(k);
    bool changed = false, failed = false;
    for (std::size_t x = 0; x < ops.size() && !failed; ++x) {
      for (std::size_t y = 0; y < ops.size() && !failed; ++y) {
        FittedOperation product;
        product.determinant = ops[x].determinant * ops[y].determinant;
        product.permutation = compose(ops[x].permutation, ops[y].permutation);
        if (index.count(key_of(product))) continue;
        product.matrix = fit_operation(geometry, product.permutation, product.determinant);
        product.deviation = largest_deviation(geometry, product.matrix, product.permutation);
        if (product.deviation <= acceptance) {
          index[key_of(product)] = static_cast<int>(ops.size());
          ops.push_back(product);
          changed = true;
        } else {
          failed = true;
        }
      }
    }
    if (failed) {
      auto worst = std::max_element(
          ops.begin() + 1, ops.end(),
          [](const FittedOperation& p, const FittedOperation& q) { return p.deviation < q.deviation; });
      notes.push_back("an operation within the tolerance whose products are not was dropped (deviation " +
                      std::to_string(worst->deviation) + " Å)");
      ops.erase(worst);
      changed = true;
    }
    if (!changed) return ops;
  }
  throw Error("internal: the symmetry operations found could not be closed into a group");
}

int operation_order(const FittedOperation& op) {
  std::vector<int> power = op.permutation;
  int determinant = op.determinant;
  for (int k = 1; k <= 1000; ++k) {
    bool identity = determinant == 1;
    for (std::size_t i = 0; i < power.size() && identity; ++i) identity = power[i] == static_cast<int>(i);
    if (identity) return k;
    power = compose(op.permutation, power);
    determinant *= op.determinant;
  }
  return 0;
}

Eigen::Vector3d proper_axis(const Eigen::Matrix3d& r) {
  Eigen::Vector3d axis;
  double angle = 0.0;
  detail::proper_axis_and_angle(r, axis, angle);
  return axis;
}

bool is_inversion(const FittedOperation& op) { return op.determinant < 0 && op.matrix.trace() < -2.0; }
// A reflection is an improper involution other than i (S_n with large n also has a
// trace near 1, so the trace alone does not decide).
bool is_reflection(const FittedOperation& op) {
  return op.determinant < 0 && op.matrix.trace() > 0.0 &&
         (op.matrix * op.matrix - Eigen::Matrix3d::Identity()).cwiseAbs().maxCoeff() < 0.1;
}

// Counts atoms on an axis through the centre, and their mass.
std::pair<int, double> atoms_on_axis(const Geometry& geometry, const Eigen::Vector3d& axis,
                                     double acceptance) {
  int count = 0;
  double mass = 0.0;
  for (std::size_t i = 0; i < geometry.points.size(); ++i) {
    const Eigen::Vector3d& p = geometry.points[i];
    if ((p - p.dot(axis) * axis).norm() <= acceptance) {
      ++count;
      mass += geometry.masses[i];
    }
  }
  return {count, mass};
}

std::pair<int, double> atoms_in_plane(const Geometry& geometry, const Eigen::Vector3d& normal,
                                      double acceptance) {
  int count = 0;
  double mass = 0.0;
  for (std::size_t i = 0; i < geometry.points.size(); ++i)
    if (std::abs(geometry.points[i].dot(normal)) <= acceptance) {
      ++count;
      mass += geometry.masses[i];
    }
  return {count, mass};
}

// Classes of the fitted group restricted to a subset, by conjugation of permutations.
std::vector<int> conjugacy_labels(const std::vector<FittedOperation>& ops) {
  std::map<OperationKey, int> index;
  for (std::size_t k = 0; k < ops.size(); ++k) index[key_of(ops[k])] = static_cast<int>(k);
  std::vector<int> label(ops.size(), -1);
  int next = 0;
  for (std::size_t a = 0; a < ops.size(); ++a) {
    if (label[a] >= 0) continue;
    for (const auto& g : ops) {
      // g·a·g⁻¹: permutation g∘a∘g⁻¹.
      std::vector<int> inverse(g.permutation.size());
      for (std::size_t i = 0; i < inverse.size(); ++i) inverse[g.permutation[i]] = static_cast<int>(i);
      FittedOperation conjugate;
      conjugate.determinant = ops[a].determinant;
      conjugate.permutation = compose(g.permutation, compose(ops[a].permutation, inverse));
      const auto it = index.find(key_of(conjugate));
      if (it != index.end()) label[it->second] = next;
    }
    ++next;
  }
  return label;
}

// The abstract group of fitted operations (element k = ops[k]), as signed permutation
// matrices of the atoms: their products are exact.
FiniteGroup permutation_group(const std::vector<FittedOperation>& ops) {
  const int n = static_cast<int>(ops.front().permutation.size());
  std::vector<Eigen::MatrixXd> matrices;
  std::vector<std::string> names;
  for (std::size_t k = 0; k < ops.size(); ++k) {
    Eigen::MatrixXd m = Eigen::MatrixXd::Zero(n + 1, n + 1);
    for (int i = 0; i < n; ++i) m(ops[k].permutation[i], i) = 1.0;
    m(n, n) = ops[k].determinant;  // keeps an operation and its product with a planar mirror apart
    matrices.push_back(m);
    names.push_back("op" + std::to_string(k + 1));
  }
  return FiniteGroup::from_elements(matrices, names, 0.5);
}

struct Identification {
  PointGroupFamily family = PointGroupFamily::C1;
  int axis_order = 1;
  Eigen::Matrix3d symmetry_from_file = Eigen::Matrix3d::Identity();
};

Eigen::Matrix3d frame_from_axes(Eigen::Vector3d z, Eigen::Vector3d x) {
  z.normalize();
  x = (x - x.dot(z) * z).normalized();
  Eigen::Matrix3d q;
  q.row(0) = x.transpose();
  q.row(1) = z.cross(x).transpose();
  q.row(2) = z.transpose();
  return q;
}

Eigen::Vector3d any_perpendicular(const Eigen::Vector3d& z) {
  Eigen::Index smallest = 0;
  z.cwiseAbs().minCoeff(&smallest);
  return z.cross(Eigen::Vector3d::Unit(smallest)).normalized();
}

Eigen::Matrix3d inertia_frame(const Geometry& geometry) {
  Eigen::SelfAdjointEigenSolver<Eigen::Matrix3d> solver(geometry.inertia);
  Eigen::Matrix3d q = solver.eigenvectors().transpose();  // rows: axes by increasing moment
  if (q.determinant() < 0.0) q.row(2) *= -1.0;
  return q;
}

// Orders of the fitted operations and what identification reads from them.
struct GroupStructure {
  std::vector<int> orders;  // per operation
  int order = 0;            // of the group
  int proper_count = 0;
  int n_max = 1;       // highest order of a proper rotation
  int principal = -1;  // an operation of that order
  bool inversion = false;
};

GroupStructure group_structure(const std::vector<FittedOperation>& ops) {
  GroupStructure s;
  s.order = static_cast<int>(ops.size());
  for (const auto& op : ops) s.orders.push_back(operation_order(op));
  for (std::size_t k = 0; k < ops.size(); ++k) {
    if (is_inversion(ops[k])) s.inversion = true;
    if (ops[k].determinant < 0) continue;
    ++s.proper_count;
    if (s.orders[k] > s.n_max) {
      s.n_max = s.orders[k];
      s.principal = static_cast<int>(k);
    }
  }
  return s;
}

std::vector<Eigen::Vector3d> axes_of_order(const std::vector<FittedOperation>& ops, const GroupStructure& s,
                                           int wanted, bool proper) {
  std::vector<Eigen::Vector3d> axes;
  for (std::size_t k = 0; k < ops.size(); ++k)
    if (s.orders[k] == wanted && (ops[k].determinant > 0) == proper)
      axes.push_back(proper_axis(ops[k].matrix));
  return axes;
}

// A direction with the atoms on its axis or in its plane (count, mass).
using AxisChoice = std::pair<Eigen::Vector3d, std::pair<int, double>>;

// More atoms first, then more mass; the first listed wins a tie.
Eigen::Vector3d best_by_atoms(const std::vector<AxisChoice>& options) {
  constexpr double same_mass_da = 1e-9;
  std::size_t best = 0;
  for (std::size_t k = 1; k < options.size(); ++k) {
    const auto& a = options[k].second;
    const auto& b = options[best].second;
    if (a.first > b.first || (a.first == b.first && a.second > b.second + same_mass_da)) best = k;
  }
  return options[best].first;
}

// C1, Ci, Cs (one proper operation): inertia frame, or for Cs z normal to the mirror and
// x, y along the inertia axes of the planar projection (x: smaller moment).
Identification identify_without_rotations(const Geometry& geometry, const std::vector<FittedOperation>& ops,
                                          const GroupStructure& s) {
  Identification id;
  if (s.order == 1 || s.inversion) {
    id.family = s.order == 1 ? PointGroupFamily::C1 : PointGroupFamily::Ci;
    id.symmetry_from_file = inertia_frame(geometry);
    return id;
  }
  id.family = PointGroupFamily::Cs;
  const FittedOperation& mirror = ops[0].determinant < 0 ? ops[0] : ops[1];
  const Eigen::Vector3d z = proper_axis(mirror.matrix);
  Eigen::Matrix2d inertia = Eigen::Matrix2d::Zero();
  const Eigen::Vector3d u = any_perpendicular(z), v = z.cross(u);
  for (std::size_t i = 0; i < geometry.points.size(); ++i) {
    const Eigen::Vector2d p(geometry.points[i].dot(u), geometry.points[i].dot(v));
    inertia += geometry.masses[i] * (p.squaredNorm() * Eigen::Matrix2d::Identity() - p * p.transpose());
  }
  Eigen::SelfAdjointEigenSolver<Eigen::Matrix2d> solver(inertia);
  const Eigen::Vector2d e = solver.eigenvectors().col(0);
  id.symmetry_from_file = frame_from_axes(z, e(0) * u + e(1) * v);
  return id;
}

// T, Td, Th, O, Oh, I, Ih: x, y, z along three perpendicular axes of order 2 (T, Th, I,
// Ih), of S4 (Td) or of C4 (O, Oh). False when the structure is not cubic.
bool identify_cubic(const std::vector<FittedOperation>& ops, const GroupStructure& s, Identification& id) {
  if (s.proper_count == 12 && s.n_max == 3)
    id.family = s.inversion     ? PointGroupFamily::Th
                : s.order == 24 ? PointGroupFamily::Td
                                : PointGroupFamily::T;
  else if (s.proper_count == 24 && s.n_max == 4)
    id.family = s.inversion ? PointGroupFamily::Oh : PointGroupFamily::O;
  else if (s.proper_count == 60 && s.n_max == 5)
    id.family = s.inversion ? PointGroupFamily::Ih : PointGroupFamily::I;
  else
    return false;
  const bool octahedral = id.family == PointGroupFamily::O || id.family == PointGroupFamily::Oh;
  const std::vector<Eigen::Vector3d> axes = axes_of_order(ops, s, octahedral ? 4 : 2, true);
  const Eigen::Vector3d& x = axes.front();
  Eigen::Vector3d y = Eigen::Vector3d::Zero();
  for (const auto& a : axes)
    if (std::abs(a.dot(x)) < 0.1) {
      y = a;
      break;
    }
  if (y.isZero()) throw Error("internal: no perpendicular twofold axes in a cubic group");
  id.symmetry_from_file = frame_from_axes(x.cross(y), x);
  if (id.family == PointGroupFamily::I || id.family == PointGroupFamily::Ih) {
    // Two icosahedra share these axes; pick the one with a fivefold axis along (0, 1, φ).
    const double golden = (1.0 + std::sqrt(5.0)) / 2.0;
    const Eigen::Vector3d five_fold = Eigen::Vector3d(0, 1, golden).normalized();
    bool aligned = false;
    for (const auto& a : axes_of_order(ops, s, 5, true))
      aligned = aligned || std::abs((id.symmetry_from_file * a).dot(five_fold)) > 0.99;
    if (!aligned) {
      Eigen::Matrix3d turn;  // new x = old y, new y = −old x
      turn << 0, 1, 0, -1, 0, 0, 0, 0, 1;
      id.symmetry_from_file = turn * id.symmetry_from_file;
    }
  }
  return true;
}

// Cn, Cnh, Cnv, S2n (a cyclic rotation subgroup).
Identification identify_cyclic(const Geometry& geometry, const std::vector<FittedOperation>& ops,
                               const GroupStructure& s, double acceptance) {
  Identification id;
  const int n = s.n_max;
  const Eigen::Vector3d principal_axis = proper_axis(ops[s.principal].matrix);
  bool horizontal_mirror = false, vertical_mirror = false;
  for (const auto& op : ops) {
    if (!is_reflection(op)) continue;
    const Eigen::Vector3d normal = proper_axis(op.matrix);
    if (std::abs(normal.dot(principal_axis)) > 0.9) horizontal_mirror = true;
    if (std::abs(normal.dot(principal_axis)) < 0.1) vertical_mirror = true;
  }
  id.axis_order = n;
  if (s.order == n) {
    id.family = PointGroupFamily::Cn;
  } else if (horizontal_mirror) {
    id.family = PointGroupFamily::Cnh;
  } else if (vertical_mirror) {
    id.family = PointGroupFamily::Cnv;
  } else {
    id.family = PointGroupFamily::S2n;
    id.axis_order = 2 * n;
  }
  if (id.family == PointGroupFamily::Cnv) {
    // One plane per class (for even n there are two classes, σv and σd).
    const std::vector<int> labels = conjugacy_labels(ops);
    std::map<int, Eigen::Vector3d> normal_of_class;
    for (std::size_t k = 0; k < ops.size(); ++k)
      if (is_reflection(ops[k]) && !normal_of_class.count(labels[k]))
        normal_of_class[labels[k]] = proper_axis(ops[k].matrix);
    std::vector<AxisChoice> choices;
    for (const auto& [label, normal] : normal_of_class)
      choices.push_back({normal, atoms_in_plane(geometry, normal, acceptance)});
    const Eigen::Vector3d normal = best_by_atoms(choices);
    // C2v, planar or not: the plane with more atoms is yz (x perpendicular to it).
    id.symmetry_from_file = frame_from_axes(principal_axis, n == 2 ? normal : normal.cross(principal_axis));
    return id;
  }
  // x towards the first atom off the axis (input order).
  Eigen::Vector3d x = any_perpendicular(principal_axis);
  for (const auto& p : geometry.points) {
    const Eigen::Vector3d off = p - p.dot(principal_axis) * principal_axis;
    if (off.norm() > acceptance + 1e-3) {
      x = off;
      break;
    }
  }
  id.symmetry_from_file = frame_from_axes(principal_axis, x);
  return id;
}

// D2, D2h, D2d: three perpendicular twofold axes.
Identification identify_dihedral_two(const Geometry& geometry, const std::vector<FittedOperation>& ops,
                                     const GroupStructure& s, double acceptance) {
  Identification id;
  id.axis_order = 2;
  const std::vector<Eigen::Vector3d> axes = axes_of_order(ops, s, 2, true);
  if (s.order == 8 && !s.inversion) {
    id.family = PointGroupFamily::Dnd;
    Eigen::Vector3d z = Eigen::Vector3d::UnitZ();
    for (std::size_t k = 0; k < ops.size(); ++k)
      if (s.orders[k] == 4 && ops[k].determinant < 0) z = proper_axis(ops[k].matrix);  // the S4 axis
    for (const auto& a : axes)
      if (std::abs(a.dot(z)) < 0.1) {
        id.symmetry_from_file = frame_from_axes(z, a);
        break;
      }
    return id;
  }
  id.family = s.order == 8 ? PointGroupFamily::Dnh : PointGroupFamily::Dn;
  // Planar: x perpendicular to the plane; z through more atoms (then more mass).
  int plane_normal = -1;
  for (std::size_t k = 0; k < axes.size(); ++k)
    if (atoms_in_plane(geometry, axes[k], acceptance).first == static_cast<int>(geometry.points.size()))
      plane_normal = static_cast<int>(k);
  std::vector<std::size_t> rank(axes.size());
  std::iota(rank.begin(), rank.end(), 0);
  std::stable_sort(rank.begin(), rank.end(), [&](std::size_t p, std::size_t q) {
    const auto a = atoms_on_axis(geometry, axes[p], acceptance),
               b = atoms_on_axis(geometry, axes[q], acceptance);
    return a.first > b.first || (a.first == b.first && a.second > b.second + 1e-9);
  });
  if (plane_normal >= 0) {
    rank.erase(std::find(rank.begin(), rank.end(), static_cast<std::size_t>(plane_normal)));
    id.symmetry_from_file = frame_from_axes(axes[rank[0]], axes[plane_normal]);
  } else {
    id.symmetry_from_file = frame_from_axes(axes[rank[0]], axes[rank[2]]);
  }
  return id;
}

// Dn, Dnh, Dnd (n > 2): x along a perpendicular twofold axis, of the class through more
// atoms.
Identification identify_dihedral(const Geometry& geometry, const std::vector<FittedOperation>& ops,
                                 const GroupStructure& s, double acceptance) {
  if (s.n_max == 2) return identify_dihedral_two(geometry, ops, s, acceptance);
  Identification id;
  const int n = s.n_max;
  id.axis_order = n;
  const Eigen::Vector3d principal_axis = proper_axis(ops[s.principal].matrix);
  bool horizontal_mirror = false;
  for (const auto& op : ops)
    if (is_reflection(op) && std::abs(proper_axis(op.matrix).dot(principal_axis)) > 0.9)
      horizontal_mirror = true;
  id.family = s.order == 2 * n    ? PointGroupFamily::Dn
              : horizontal_mirror ? PointGroupFamily::Dnh
                                  : PointGroupFamily::Dnd;
  const std::vector<int> labels = conjugacy_labels(ops);
  std::map<int, Eigen::Vector3d> axis_of_class;
  for (std::size_t k = 0; k < ops.size(); ++k) {
    if (ops[k].determinant < 0 || s.orders[k] != 2) continue;
    const Eigen::Vector3d axis = proper_axis(ops[k].matrix);
    if (std::abs(axis.dot(principal_axis)) < 0.1 && !axis_of_class.count(labels[k]))
      axis_of_class[labels[k]] = axis;
  }
  std::vector<AxisChoice> choices;
  for (const auto& [label, axis] : axis_of_class)
    choices.push_back({axis, atoms_on_axis(geometry, axis, acceptance)});
  id.symmetry_from_file = frame_from_axes(principal_axis, best_by_atoms(choices));
  return id;
}

// The point group of a closed set of fitted operations, from its structure (orders of
// proper rotations, presence of i, σh, σv), with its symmetry frame.
Identification identify(const Geometry& geometry, const std::vector<FittedOperation>& ops,
                        double acceptance) {
  const GroupStructure s = group_structure(ops);
  if (s.proper_count == 1) return identify_without_rotations(geometry, ops, s);
  Identification id;
  if (identify_cubic(ops, s, id)) return id;
  if (s.proper_count == s.n_max) return identify_cyclic(geometry, ops, s, acceptance);
  if (s.proper_count == 2 * s.n_max) return identify_dihedral(geometry, ops, s, acceptance);
  throw Error("internal: the symmetry operations found (" + std::to_string(s.order) +
              ") do not form a recognized point group");
}

struct Candidate {
  bool realized = true;  // false when the fitted operations could not be matched to exact ones
  PointGroup group;
  Eigen::Matrix3d symmetry_from_file;
  std::vector<std::vector<int>> permutations;
  Points symmetric_in_symmetry_frame;
  double deviation = 0.0;
};

// Exact group in the identified frame, permutations taken from the fitted operations,
// frame refined so that the symmetrized geometry is closest to the input.
Candidate realize(const Geometry& geometry, const std::vector<FittedOperation>& ops, double acceptance,
                  int linear_axis_order) {
  const Identification id = identify(geometry, ops, acceptance);
  Candidate c;
  c.group = make_point_group(id.family, id.axis_order, linear_axis_order);
  if (c.group.order() != static_cast<int>(ops.size()))
    throw Error("internal: identified " + c.group.name + " of order " + std::to_string(c.group.order()) +
                " from " + std::to_string(ops.size()) + " operations");
  Eigen::Matrix3d q = id.symmetry_from_file;
  const int n = static_cast<int>(geometry.points.size());
  const int order = c.group.order();
  for (int iteration = 0; iteration < 4; ++iteration) {
    c.permutations.assign(order, {});
    std::vector<char> used(ops.size(), 0);
    for (int g = 0; g < order; ++g) {
      const Eigen::Matrix3d target = q.transpose() * c.group.operations[g].matrix * q;
      int best = -1;
      double best_distance = 0.0;
      for (std::size_t f = 0; f < ops.size(); ++f) {
        const double distance = (ops[f].matrix - target).norm();
        if (best < 0 || distance < best_distance) {
          best = static_cast<int>(f);
          best_distance = distance;
        }
      }
      // Distinct operations of a point group differ by far more than this (Frobenius).
      constexpr double kSameOperation = 0.3;
      if (best_distance > kSameOperation || used[best]) {
        // The fitted operations are mutually inconsistent (e.g. a nearly linear molecule
        // whose noise mimics a bend); the caller falls back to subgroups.
        c.realized = false;
        c.deviation = std::numeric_limits<double>::infinity();
        return c;
      }
      used[best] = 1;
      c.permutations[g] = ops[best].permutation;
    }
    // Symmetrized geometry in the symmetry frame, then the rotation that best maps the input onto it.
    c.symmetric_in_symmetry_frame.assign(n, Eigen::Vector3d::Zero());
    for (int g = 0; g < order; ++g) {
      const Eigen::Matrix3d back = c.group.operations[g].matrix.transpose();
      for (int i = 0; i < n; ++i)
        c.symmetric_in_symmetry_frame[i] += back * (q * geometry.points[c.permutations[g][i]]);
    }
    for (auto& p : c.symmetric_in_symmetry_frame) p /= order;
    Eigen::Matrix3d covariance = Eigen::Matrix3d::Zero();
    for (int i = 0; i < n; ++i)
      covariance += c.symmetric_in_symmetry_frame[i] * geometry.points[i].transpose();
    q = detail::orthogonal_procrustes(covariance, 1);
  }
  c.symmetry_from_file = q;
  c.deviation = 0.0;
  for (int i = 0; i < n; ++i)
    c.deviation =
        std::max(c.deviation, (q.transpose() * c.symmetric_in_symmetry_frame[i] - geometry.points[i]).norm());
  return c;
}

Candidate realize_linear(const Geometry& geometry, const Eigen::Vector3d& axis, double acceptance,
                         int linear_axis_order, bool allow_inversion) {
  const int n = static_cast<int>(geometry.points.size());
  std::vector<double> s(n);
  for (int i = 0; i < n; ++i) s[i] = geometry.points[i].dot(axis);
  // Centrosymmetric when every atom has an equivalent partner at the opposite position.
  std::vector<int> partner(n, -1);
  bool centrosymmetric = allow_inversion;
  for (int i = 0; i < n && centrosymmetric; ++i) {
    double best = acceptance;
    for (int j : geometry.classes[geometry.class_of[i]])
      if (std::abs(s[i] + s[j]) <= best) {
        best = std::abs(s[i] + s[j]);
        partner[i] = j;
      }
    centrosymmetric = partner[i] >= 0;
  }
  for (int i = 0; i < n && centrosymmetric; ++i) centrosymmetric = partner[partner[i]] == i;
  Candidate c;
  c.group = make_point_group(centrosymmetric ? PointGroupFamily::Dinfh : PointGroupFamily::Cinfv, 1,
                             linear_axis_order);
  c.symmetry_from_file = frame_from_axes(axis, any_perpendicular(axis));
  std::vector<int> identity(n);
  std::iota(identity.begin(), identity.end(), 0);
  for (const auto& op : c.group.operations)
    c.permutations.push_back(op.matrix(2, 2) > 0.0 ? identity : partner);
  c.symmetric_in_symmetry_frame.assign(n, Eigen::Vector3d::Zero());
  for (int i = 0; i < n; ++i) {
    const double z = centrosymmetric ? 0.5 * (s[i] - s[partner[i]]) : s[i];
    c.symmetric_in_symmetry_frame[i] = Eigen::Vector3d(0, 0, z);
  }
  for (int i = 0; i < n; ++i)
    c.deviation = std::max(
        c.deviation,
        (c.symmetry_from_file.transpose() * c.symmetric_in_symmetry_frame[i] - geometry.points[i]).norm());
  return c;
}

std::string format_double(double v, int precision) {
  std::ostringstream out;
  out.precision(precision);
  out << v;
  return out.str();
}

void check_detection_input(const Eigen::VectorXd& coordinates_angstrom,
                           const std::vector<int>& atomic_numbers, const Eigen::VectorXd& masses_da,
                           const SymmetryOptions& options) {
  options.validate();
  const int n = static_cast<int>(atomic_numbers.size());
  if (n < 2) throw Error("point-group detection needs at least 2 atoms, got " + std::to_string(n));
  if (coordinates_angstrom.size() != 3 * n)
    throw Error("coordinate vector has " + std::to_string(coordinates_angstrom.size()) +
                " entries, expected " + std::to_string(3 * n));
  if (masses_da.size() != n)
    throw Error("got " + std::to_string(masses_da.size()) + " masses for " + std::to_string(n) + " atoms");
  if (!coordinates_angstrom.allFinite()) throw Error("coordinates contain a non-finite value");
  for (int i = 0; i < n; ++i)
    if (!(masses_da[i] > 0.0))
      throw Error("mass of atom " + std::to_string(i + 1) + " must be positive, got " +
                  std::to_string(masses_da[i]));
}

// A linear molecule within the tolerance: D∞h when symmetrizing to it stays within the
// tolerance, else C∞v.
Candidate detect_linear(const Geometry& geometry, const Eigen::Vector3d& line, const SymmetryOptions& options,
                        PointGroupResult& result) {
  const double tolerance = options.tolerance_angstrom, acceptance = 2.0 * tolerance;
  Candidate chosen = realize_linear(geometry, line, acceptance, options.linear_axis_order, true);
  if (chosen.deviation > tolerance && chosen.group.family == PointGroupFamily::Dinfh) {
    result.notes.push_back(
        "symmetrizing to D∞h would move an atom by more than the tolerance; reduced to C∞v");
    chosen = realize_linear(geometry, line, acceptance, options.linear_axis_order, false);
  }
  result.operations_found = chosen.group.order();
  result.notes.push_back("linear molecule: operations are those of " + chosen.group.finite_name +
                         ", the finite subgroup used for " + chosen.group.display_name);
  return chosen;
}

// Every operation is within 2·tolerance but the average over the group is not within the
// tolerance: the largest subgroup that is (all conjugates tried), from the abstract group
// of the fitted operations (composition of their atom permutations).
Candidate reduce_to_subgroup(const Geometry& geometry, const std::vector<FittedOperation>& ops,
                             const Candidate& whole, const SymmetryOptions& options,
                             PointGroupResult& result) {
  const double tolerance = options.tolerance_angstrom, acceptance = 2.0 * tolerance;
  // Element k of the abstract group ↔ fitted operation fitted_of[k].
  std::vector<int> fitted_of(ops.size());
  FiniteGroup full;
  if (whole.realized) {
    full = whole.group.finite_group();  // exact and cheap
    std::map<OperationKey, int> fitted_index;
    for (std::size_t k = 0; k < ops.size(); ++k) fitted_index[key_of(ops[k])] = static_cast<int>(k);
    for (int g = 0; g < full.order(); ++g)
      fitted_of[g] = fitted_index.at({whole.group.operations[g].proper ? 1 : -1, whole.permutations[g]});
  } else {
    full = permutation_group(ops);  // (N+1)-dimensional: only for this rare case
    std::iota(fitted_of.begin(), fitted_of.end(), 0);
  }
  const auto subgroups = all_subgroups(full);
  Candidate chosen = whole;
  bool replaced = false;
  std::size_t level = 0;
  constexpr double strictly_better_angstrom = 1e-12;  // ties between conjugates keep the first
  for (auto it = subgroups.rbegin(); it != subgroups.rend(); ++it) {
    if (it->elements.size() == static_cast<std::size_t>(full.order())) continue;
    if (replaced && it->elements.size() < level) break;
    std::vector<FittedOperation> subset;
    for (int g : it->elements) subset.push_back(ops[fitted_of[g]]);
    Candidate trial = realize(geometry, subset, acceptance, options.linear_axis_order);
    if (trial.realized && trial.deviation <= tolerance &&
        (!replaced || trial.deviation < chosen.deviation - strictly_better_angstrom)) {
      chosen = trial;
      replaced = true;
      level = it->elements.size();
    }
  }
  if (!replaced) throw Error("internal: not even C1 fits within the tolerance");
  const std::string rejected = whole.group.name;
  if (whole.realized)
    result.notes.push_back("operations of " + rejected +
                           " were found within 2×tolerance, but symmetrizing to " + rejected +
                           " moves an atom by " + format_double(whole.deviation, 3) +
                           " Å > tolerance; reduced to the largest subgroup within it, " + chosen.group.name);
  else
    result.notes.push_back("the operations found within 2×tolerance are not consistent with one " + rejected +
                           " frame; reduced to the largest subgroup that is, " + chosen.group.name);
  return chosen;
}

// Operations found on the geometry, closed into a group, identified and realized exactly
// (or reduced to the largest subgroup within the tolerance).
Candidate detect_nonlinear(const Geometry& geometry, const SymmetryOptions& options,
                           PointGroupResult& result) {
  const double tolerance = options.tolerance_angstrom, acceptance = 2.0 * tolerance;
  const std::vector<FittedOperation> found =
      find_operations(geometry, tolerance, result.candidate_operations_tested);
  const std::vector<FittedOperation> ops = close_operations(geometry, found, acceptance, result.notes);
  result.operations_found = static_cast<int>(ops.size());
  const Candidate chosen = realize(geometry, ops, acceptance, options.linear_axis_order);
  if (chosen.realized && chosen.deviation <= tolerance) return chosen;
  return reduce_to_subgroup(geometry, ops, chosen, options, result);
}

// The chosen group, frame and permutations; the symmetrized geometry in both frames and the
// orbits of equivalent atoms.
void record_candidate(const Candidate& chosen, const Eigen::Vector3d& center, PointGroupResult& result) {
  const int n = static_cast<int>(result.atomic_numbers.size());
  result.group = chosen.group;
  result.symmetry_from_file = chosen.symmetry_from_file;
  result.permutations = chosen.permutations;
  result.max_deviation_angstrom = chosen.deviation;
  result.symmetry_frame_coordinates_angstrom.resize(3 * n);
  result.symmetrized_coordinates_angstrom.resize(3 * n);
  for (int i = 0; i < n; ++i) {
    result.symmetry_frame_coordinates_angstrom.segment<3>(3 * i) = chosen.symmetric_in_symmetry_frame[i];
    result.symmetrized_coordinates_angstrom.segment<3>(3 * i) =
        center + chosen.symmetry_from_file.transpose() * chosen.symmetric_in_symmetry_frame[i];
  }
  std::vector<int> orbit_of(n, -1);
  for (int i = 0; i < n; ++i) {
    if (orbit_of[i] >= 0) continue;
    std::vector<int> orbit;
    for (const auto& p : result.permutations) orbit.push_back(p[i]);
    std::sort(orbit.begin(), orbit.end());
    orbit.erase(std::unique(orbit.begin(), orbit.end()), orbit.end());
    for (int j : orbit) orbit_of[j] = static_cast<int>(result.atom_orbits.size());
    result.atom_orbits.push_back(orbit);
  }
}

}  // namespace

PointGroupResult detect_point_group(const Eigen::VectorXd& coordinates_angstrom,
                                    const std::vector<int>& atomic_numbers, const Eigen::VectorXd& masses_da,
                                    const SymmetryOptions& options) {
  check_detection_input(coordinates_angstrom, atomic_numbers, masses_da, options);
  const int n = static_cast<int>(atomic_numbers.size());
  const double tolerance = options.tolerance_angstrom;
  PointGroupResult result;
  result.input_coordinates_angstrom = coordinates_angstrom;
  result.atomic_numbers = atomic_numbers;
  result.masses_da = masses_da;
  result.tolerance_angstrom = tolerance;
  const Eigen::Vector3d center = center_of_mass(coordinates_angstrom, masses_da);
  result.center_angstrom = center;
  Points points(n);
  for (int i = 0; i < n; ++i) points[i] = coordinates_angstrom.segment<3>(3 * i) - center;
  Geometry geometry = classify_atoms(points, atomic_numbers, masses_da, tolerance, options.mass_tolerance_da);
  geometry.inertia = inertia_tensor(coordinates_angstrom, masses_da);

  // Linear within the tolerance: every atom within it of the axis of least inertia.
  const Eigen::Vector3d line = inertia_frame(geometry).row(0).transpose();
  double off_line = 0.0;
  for (const auto& p : points) off_line = std::max(off_line, (p - p.dot(line) * line).norm());
  const Candidate chosen = off_line <= tolerance ? detect_linear(geometry, line, options, result)
                                                 : detect_nonlinear(geometry, options, result);
  record_candidate(chosen, center, result);
  // However large the tolerance, the symmetrized structure must not merge atoms (a
  // 10 Å tolerance once made ammonia linear with N and H at one point).
  for (int i = 0; i < n; ++i)
    for (int j = i + 1; j < n; ++j) {
      const double d = (result.symmetrized_coordinates_angstrom.segment<3>(3 * i) -
                        result.symmetrized_coordinates_angstrom.segment<3>(3 * j))
                           .norm();
      if (d < symmetrized_minimum_distance_angstrom)
        throw Error(fmt::format(
            "symmetrizing to {} with tolerance {} Å puts atoms {} and {} {:.3f} Å apart "
            "(overlapping); expected at least {} Å: use a smaller symmetry tolerance",
            result.group.name, tolerance, i + 1, j + 1, d, symmetrized_minimum_distance_angstrom));
    }
  result.notes.push_back("tolerance " + format_double(tolerance, 3) +
                         " Å (largest displacement of an atom by symmetrization), as given; not adapted");
  result.message = "point group " + result.group.name + " (order " + std::to_string(result.group.order()) +
                   "); largest deviation removed by symmetrization " +
                   format_double(result.max_deviation_angstrom, 3) + " Å";
  return result;
}

PointGroupResult detect_point_group(const Molecule& molecule, const SymmetryOptions& options) {
  std::vector<int> atomic_numbers;
  for (const auto& atom : molecule.atoms) atomic_numbers.push_back(atom.atomic_number);
  return detect_point_group(molecule.coordinates(), atomic_numbers, molecule.masses(), options);
}

}  // namespace overtone
