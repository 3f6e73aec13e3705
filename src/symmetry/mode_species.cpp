#include <algorithm>
#include <cmath>
#include <map>
#include <numeric>
#include <sstream>

#include "core/error.hpp"
#include "core/units.hpp"
#include "harmonic/inertia.hpp"
#include "symmetry/geometry.hpp"
#include "symmetry/mode_symmetry.hpp"

namespace overtone {
namespace {

int atom_count(const PointGroupResult& group) { return static_cast<int>(group.atomic_numbers.size()); }

void check_size(const PointGroupResult& group, Eigen::Index rows, const char* what) {
  if (rows != 3 * atom_count(group))
    throw Error(std::string(what) + " has " + std::to_string(rows) +
                " rows, expected 3N = " + std::to_string(3 * atom_count(group)));
}

// Projection weight c_Γ = (complex dimension)/|G| of a species.
double projection_weight(const PointGroup& group, const Irrep& irrep) {
  return (irrep.complex_pair ? irrep.dimension / 2 : irrep.dimension) / static_cast<double>(group.order());
}

double character(const PointGroup& group, const Irrep& irrep, int g) {
  return irrep.characters[group.operations[g].class_index];
}

std::string format_number(double v, int precision) {
  std::ostringstream out;
  out.precision(precision);
  out << v;
  return out.str();
}

}  // namespace

std::vector<double> vibrational_characters(const PointGroupResult& group) {
  const PointGroup& pg = group.group;
  std::vector<double> chi;
  for (int g = 0; g < pg.order(); ++g) {
    const Eigen::Matrix3d& r = pg.operations[g].matrix;
    int fixed = 0;
    for (int i = 0; i < atom_count(group); ++i) fixed += group.permutations[g][i] == i;
    const double trace = r.trace();
    const double rotations = pg.linear ? r.determinant() * (trace - r(2, 2)) : r.determinant() * trace;
    chi.push_back(fixed * trace - trace - rotations);
  }
  return chi;
}

std::vector<int> vibrational_decomposition(const PointGroupResult& group) {
  const std::vector<double> multiplicities =
      reduce_representation(group.group, vibrational_characters(group));
  std::vector<int> counts;
  for (std::size_t k = 0; k < multiplicities.size(); ++k) {
    const Multiplicity count = as_multiplicity(multiplicities[k]);
    if (!count.integral)
      throw Error("vibrational representation has a non-integer multiplicity " +
                  format_number(multiplicities[k], 8) + " of " + group.group.character_table.irreps[k].label);
    counts.push_back(count.count);
  }
  return counts;
}

Eigen::MatrixXd apply_operation(const PointGroupResult& group, int operation, const Eigen::MatrixXd& vectors,
                                CoordinateFrame frame) {
  check_size(group, vectors.rows(), "vector block");
  const Eigen::Matrix3d r = group.operation_matrix(operation, frame);
  const auto& permutation = group.permutations[operation];
  Eigen::MatrixXd out(vectors.rows(), vectors.cols());
  for (int i = 0; i < atom_count(group); ++i)
    out.middleRows<3>(3 * permutation[i]) = r * vectors.middleRows<3>(3 * i);
  return out;
}

Eigen::MatrixXd symmetrize_cartesian_hessian(const Eigen::MatrixXd& hessian, const PointGroupResult& group,
                                             CoordinateFrame frame) {
  check_size(group, hessian.rows(), "Hessian");
  if (hessian.cols() != hessian.rows())
    throw Error("Hessian is " + std::to_string(hessian.rows()) + "×" + std::to_string(hessian.cols()) +
                ", expected square");
  const int n = atom_count(group);
  const int order = group.group.order();
  Eigen::MatrixXd sum = Eigen::MatrixXd::Zero(3 * n, 3 * n);
  for (int g = 0; g < order; ++g) {
    const Eigen::Matrix3d r = group.operation_matrix(g, frame);
    const auto& p = group.permutations[g];
    // (D(g)ᵀ H D(g))_{ij} = R_gᵀ · H_{π(i)π(j)} · R_g.
    for (int i = 0; i < n; ++i)
      for (int j = 0; j < n; ++j)
        sum.block<3, 3>(3 * i, 3 * j).noalias() +=
            r.transpose() * hessian.block<3, 3>(3 * p[i], 3 * p[j]) * r;
  }
  sum /= order;
  return 0.5 * (sum + sum.transpose());
}

namespace {

// Largest displacement an operation leaves when applied to the geometry in a frame.
double frame_deviation(const PointGroupResult& group, const Eigen::VectorXd& coordinates,
                       const Eigen::VectorXd& masses, CoordinateFrame frame) {
  const int n = atom_count(group);
  const Eigen::Vector3d center = center_of_mass(coordinates, masses);
  double worst = 0.0;
  for (int g = 0; g < group.group.order(); ++g) {
    const Eigen::Matrix3d r = group.operation_matrix(g, frame);
    for (int i = 0; i < n; ++i) {
      const Eigen::Vector3d image = r * (coordinates.segment<3>(3 * i) - center);
      const Eigen::Vector3d target = coordinates.segment<3>(3 * group.permutations[g][i]) - center;
      worst = std::max(worst, (image - target).norm());
    }
  }
  return worst;
}

// Matrices of the operations in a new basis B·U of the same space: Uᵀ·A(g)·U.
std::vector<Eigen::MatrixXd> change_basis(const std::vector<Eigen::MatrixXd>& blocks,
                                          const Eigen::MatrixXd& u) {
  std::vector<Eigen::MatrixXd> out;
  for (const auto& a : blocks) out.push_back(u.transpose() * a * u);
  return out;
}

Eigen::MatrixXd species_projector(const PointGroup& pg, const Irrep& irrep,
                                  const std::vector<Eigen::MatrixXd>& blocks) {
  Eigen::MatrixXd p = Eigen::MatrixXd::Zero(blocks.front().rows(), blocks.front().cols());
  const double weight = projection_weight(pg, irrep);
  for (int g = 0; g < pg.order(); ++g) p += weight * character(pg, irrep, g) * blocks[g];
  return 0.5 * (p + p.transpose());
}

// ---- Symmetry-adapted partners of one set ----------------------------------------------

// Operations whose symmetry-frame matrices are diagonal (C2 about axes, σ through coordinate
// planes, i): they commute, and their common eigenvectors label the partners.
std::vector<int> diagonal_operations(const PointGroup& pg) {
  constexpr double exact = 1e-9;  // entries of exactly built operations that are zero
  std::vector<int> diagonal;
  for (int g = 0; g < pg.order(); ++g) {
    const Eigen::Matrix3d& r = pg.operations[g].matrix;
    if ((r - Eigen::Matrix3d(r.diagonal().asDiagonal())).cwiseAbs().maxCoeff() < exact) diagonal.push_back(g);
  }
  return diagonal;
}

// Orthonormal columns of `block` (d × k) closest to the given vectors, by Gram–Schmidt of
// their projections onto the block, completed by the block's own columns.
Eigen::MatrixXd follow_vectors(const Eigen::MatrixXd& block, const Eigen::MatrixXd& vectors) {
  constexpr double negligible = 1e-6;  // a projection this short carries no direction
  const Eigen::Index d = block.rows(), wanted = block.cols();
  Eigen::MatrixXd chosen(d, 0);
  auto add = [&](Eigen::VectorXd v) {
    if (chosen.cols() > 0) v -= chosen * (chosen.transpose() * v);
    if (v.norm() < negligible) return;
    chosen.conservativeResize(d, chosen.cols() + 1);
    chosen.col(chosen.cols() - 1) = v.normalized();
  };
  for (Eigen::Index m = 0; m < vectors.cols() && chosen.cols() < wanted; ++m)
    add(block * (block.transpose() * vectors.col(m)));
  for (Eigen::Index k = 0; k < wanted && chosen.cols() < wanted; ++k) add(block.col(k));
  return chosen;
}

// Common eigenvectors of the diagonal operations on the set (columns of a d × d orthogonal
// matrix); within a block of equal eigenvalues, the partners follow the original modes.
Eigen::MatrixXd common_eigenvectors(const std::vector<Eigen::MatrixXd>& blocks,
                                    const std::vector<int>& diagonal,
                                    const Eigen::MatrixXd& original_in_set) {
  const Eigen::Index d = blocks.front().rows();
  Eigen::MatrixXd combination = Eigen::MatrixXd::Zero(d, d);
  for (std::size_t k = 0; k < diagonal.size(); ++k) {
    const Eigen::MatrixXd& a = blocks[diagonal[k]];
    combination += std::ldexp(1.0, static_cast<int>(k)) * 0.5 * (a + a.transpose());
  }
  Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> solver(combination);
  Eigen::MatrixXd u = solver.eigenvectors();
  const Eigen::VectorXd& values = solver.eigenvalues();
  constexpr double equal_eigenvalues = 1e-6;  // eigenvalues are sums of ±2^k: distinct ones differ by ≥ 2
  for (Eigen::Index start = 0; start < d;) {
    Eigen::Index end = start + 1;
    while (end < d && std::abs(values[end] - values[start]) < equal_eigenvalues) ++end;
    if (end - start > 1)
      u.middleCols(start, end - start) = follow_vectors(u.middleCols(start, end - start), original_in_set);
    start = end;
  }
  return u;
}

// Columns of u reordered like x, y, z: a partner whose signs under the diagonal operations
// match those of a coordinate axis takes that axis's place.
Eigen::MatrixXd order_like_axes(const PointGroup& pg, const Eigen::MatrixXd& u,
                                const std::vector<Eigen::MatrixXd>& blocks,
                                const std::vector<int>& diagonal) {
  const auto d = static_cast<int>(u.cols());
  auto signature = [&](const Eigen::VectorXd& column) {
    std::vector<int> s;
    for (int g : diagonal) s.push_back(column.dot(blocks[g] * column) > 0.0 ? 1 : -1);
    return s;
  };
  std::vector<std::vector<int>> axis_signatures(3);
  for (int axis = 0; axis < 3; ++axis)
    for (int g : diagonal)
      axis_signatures[axis].push_back(pg.operations[g].matrix(axis, axis) > 0.0 ? 1 : -1);
  std::vector<int> order(d);
  std::iota(order.begin(), order.end(), 0);
  std::vector<int> rank(d, 3);
  for (int k = 0; k < d; ++k) {
    const auto s = signature(u.col(k));
    for (int axis = 0; axis < 3; ++axis)
      if (s == axis_signatures[axis]) {
        rank[k] = axis;
        break;
      }
  }
  std::stable_sort(order.begin(), order.end(), [&](int a, int b) { return rank[a] < rank[b]; });
  Eigen::MatrixXd sorted(d, d);
  for (int k = 0; k < d; ++k) sorted.col(k) = u.col(order[k]);
  return sorted;
}

// The operation that turns one partner into the next: about z the one with the smallest
// positive turn in the xy plane (C_n, or S_2n where that is finer); for cubic groups the
// proper rotation by +120° about (1, 1, 1). −1 when there is none.
int turning_operation(const PointGroup& pg) {
  constexpr double exact = 1e-9;  // axes and angles of exactly built operations
  const Eigen::Vector3d body_diagonal = Eigen::Vector3d(1, 1, 1).normalized();
  int about_z = -1, about_diagonal = -1;
  double smallest_turn = 2.0 * units::pi;
  for (int g = 0; g < pg.order(); ++g) {
    const auto& op = pg.operations[g];
    if (op.axis.isZero()) continue;
    if (std::abs(std::abs(op.axis.z()) - 1.0) < exact) {
      const double turn = std::atan2(op.matrix(1, 0), op.matrix(0, 0));
      if (turn > exact && turn < smallest_turn) {
        smallest_turn = turn;
        about_z = g;
      }
    } else if (op.proper && about_diagonal < 0 && op.axis.dot(body_diagonal) > 1.0 - exact &&
               std::abs(detail::signed_rotation_angle(op.matrix, op.axis) - 2.0 * units::pi / 3.0) < exact) {
      about_diagonal = g;
    }
  }
  return about_z >= 0 ? about_z : about_diagonal;
}

// Orthogonal U (d×d) that rotates an orthonormal basis B of one set (3N×d, operation
// matrices `blocks` = Bᵀ·D(g)·B) into symmetry-adapted partners B·U.
Eigen::MatrixXd adapt_basis(const PointGroupResult& group, const Eigen::MatrixXd& basis,
                            const std::vector<Eigen::MatrixXd>& blocks,
                            const Eigen::MatrixXd& original_modes) {
  const PointGroup& pg = group.group;
  const int d = static_cast<int>(basis.cols());
  Eigen::Index largest = 0;
  if (d == 1) {
    basis.col(0).cwiseAbs().maxCoeff(&largest);
    return Eigen::MatrixXd::Constant(1, 1, basis(largest, 0) < 0.0 ? -1.0 : 1.0);
  }
  const std::vector<int> diagonal = diagonal_operations(pg);
  Eigen::MatrixXd sorted = order_like_axes(
      pg, common_eigenvectors(blocks, diagonal, basis.transpose() * original_modes), blocks, diagonal);
  // Signs: partner 1 with its largest component positive; the others so that the turning
  // operation takes partner k−1 positively into partner k where it connects them.
  auto flip_to_positive_largest = [&](int k) {
    const Eigen::VectorXd column = basis * sorted.col(k);
    column.cwiseAbs().maxCoeff(&largest);
    if (column(largest) < 0.0) sorted.col(k) *= -1.0;
  };
  flip_to_positive_largest(0);
  const int reference = turning_operation(pg);
  constexpr double unconnected = 1e-6;  // the turn leaves partner k−1 orthogonal to partner k
  for (int k = 1; k < d; ++k) {
    const double turned = reference >= 0 ? sorted.col(k).dot(blocks[reference] * sorted.col(k - 1)) : 0.0;
    if (std::abs(turned) <= unconnected)
      flip_to_positive_largest(k);
    else if (turned < 0.0)
      sorted.col(k) *= -1.0;
  }
  return sorted;
}

// ---- Phases of the assignment -------------------------------------------------------------

void check_assignment_input(const PointGroupResult& group, const HarmonicResult& harmonic,
                            const ModeSpeciesOptions& options) {
  if (!(options.degeneracy_tolerance_cm1 >= 0.0))
    throw Error("ModeSpeciesOptions::degeneracy_tolerance_cm1 must be non-negative, got " +
                std::to_string(options.degeneracy_tolerance_cm1));
  if (!(options.purity_tolerance > 0.0 && options.purity_tolerance < 0.5))
    throw Error("ModeSpeciesOptions::purity_tolerance must lie in (0, 0.5), got " +
                std::to_string(options.purity_tolerance));
  const int n = atom_count(group);
  if (harmonic.masses_da.size() != n)
    throw Error("harmonic analysis has " + std::to_string(harmonic.masses_da.size()) +
                " atoms, the point group " + std::to_string(n));
  constexpr double same_mass_da = 1e-6;  // masses of one isotope agree to all printed digits
  for (int i = 0; i < n; ++i)
    if (std::abs(harmonic.masses_da[i] - group.masses_da[i]) > same_mass_da)
      throw Error("mass of atom " + std::to_string(i + 1) + " is " + format_number(harmonic.masses_da[i], 8) +
                  " Da in the harmonic analysis but " + format_number(group.masses_da[i], 8) +
                  " Da in the symmetry detection; detect the group with the same isotopes");
  check_size(group, harmonic.mass_weighted_modes.rows(), "mode matrix");
}

// The frame (input or standard) in which the harmonic geometry carries the group.
CoordinateFrame harmonic_frame(const PointGroupResult& group, const HarmonicResult& harmonic,
                               const ModeSpeciesOptions& options) {
  const double frame_tolerance = options.frame_check_tolerance_angstrom >= 0.0
                                     ? options.frame_check_tolerance_angstrom
                                     : 2.0 * group.tolerance_angstrom;
  const double input_deviation =
      frame_deviation(group, harmonic.coordinates_angstrom, harmonic.masses_da, CoordinateFrame::File);
  const double symmetry_frame_deviation =
      frame_deviation(group, harmonic.coordinates_angstrom, harmonic.masses_da, CoordinateFrame::Symmetry);
  if (input_deviation <= frame_tolerance) return CoordinateFrame::File;
  if (symmetry_frame_deviation <= frame_tolerance) return CoordinateFrame::Symmetry;
  throw Error("the harmonic geometry does not have the symmetry of " + group.group.name +
              " in the detection's file or symmetry frame (largest displacement " +
              format_number(std::min(input_deviation, symmetry_frame_deviation), 3) + " Å, allowed " +
              format_number(frame_tolerance, 3) +
              " Å); detect the group on the geometry the modes were computed at");
}

// A set found by projecting a cluster of near-equal frequencies onto one species.
struct PendingSet {
  Eigen::MatrixXd basis;                // 3N×d
  std::vector<Eigen::MatrixXd> blocks;  // basisᵀ·D(g)·basis
  int irrep;
  int cluster_index;
  Eigen::MatrixXd species_part;  // 3N×(copies·d): the cluster's whole part of this species
  bool shared = false;           // the cluster holds several sets of this species
};

// Everything the phases of one assignment share.
struct Assignment {
  const PointGroupResult& group;
  const HarmonicResult& harmonic;
  CoordinateFrame frame;
  std::vector<std::vector<int>> clusters;         // candidate sets, modes ascending
  std::vector<std::vector<int>> cluster_species;  // per cluster member: species holding most of it
  std::vector<PendingSet> pending;
  std::vector<std::vector<int>> members;  // per pending set: its modes
  std::vector<std::string> warnings;
};

// Projects one cluster onto every species: one pending set per copy of a species (copies
// split by frequency), and for every member the species holding most of it.
void project_cluster(Assignment& a, std::size_t cluster_index) {
  const PointGroup& pg = a.group.group;
  const auto& irreps = pg.character_table.irreps;
  const Eigen::MatrixXd& modes = a.harmonic.mass_weighted_modes;
  const auto& cluster = a.clusters[cluster_index];
  const int c = static_cast<int>(cluster.size());
  Eigen::MatrixXd cluster_basis(modes.rows(), c);
  Eigen::VectorXd cluster_frequencies(c);
  for (int k = 0; k < c; ++k) {
    cluster_basis.col(k) = modes.col(cluster[k]);
    cluster_frequencies[k] = a.harmonic.frequencies_cm1[cluster[k]];
  }
  const auto blocks = normal_coordinate_operations(a.group, cluster_basis, a.frame);
  int covered = 0;
  Eigen::VectorXd best_weight = Eigen::VectorXd::Constant(c, -1.0);
  a.cluster_species[cluster_index].assign(c, -1);
  for (std::size_t s = 0; s < irreps.size(); ++s) {
    const Eigen::MatrixXd projector = species_projector(pg, irreps[s], blocks);
    for (int k = 0; k < c; ++k)
      if (projector(k, k) > best_weight[k]) {
        best_weight[k] = projector(k, k);
        a.cluster_species[cluster_index][k] = static_cast<int>(s);
      }
    const int count = static_cast<int>(std::lround(projector.trace()));
    if (count < 1) continue;
    // The species' part of the cluster: the projector's eigenvectors of largest eigenvalue.
    Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> solver(projector);
    const Eigen::MatrixXd part = solver.eigenvectors().rightCols(count);
    const int dimension = irreps[s].dimension;
    if (count % dimension != 0)
      a.warnings.push_back("modes near " + format_number(cluster_frequencies.mean(), 6) + " cm⁻¹ have " +
                           std::to_string(count) + " dimensions of " + irreps[s].label +
                           ", not a multiple of its dimension " + std::to_string(dimension));
    // Several copies of one species in a cluster (accidental degeneracy): split by frequency.
    Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> by_freq(part.transpose() *
                                                           cluster_frequencies.asDiagonal() * part);
    const Eigen::MatrixXd ordered = part * by_freq.eigenvectors();
    for (int start = 0; start < count; start += dimension) {
      const Eigen::MatrixXd local = ordered.middleCols(start, std::min(dimension, count - start));
      a.pending.push_back({cluster_basis * local, change_basis(blocks, local), static_cast<int>(s),
                           static_cast<int>(cluster_index), cluster_basis * part, count > dimension});
    }
    covered += count;
  }
  if (covered != c)
    a.warnings.push_back("modes near " + format_number(cluster_frequencies.mean(), 6) +
                         " cm⁻¹: projections cover " + std::to_string(covered) + " of " + std::to_string(c) +
                         " dimensions; the modes do not carry the group's symmetry");
}

// Members: each mode of a cluster takes the species holding most of it; the modes of
// one species are dealt, in frequency order, to that species' sets of the cluster
// (also in frequency order), dimension by dimension. Exactly equal frequencies of one
// species therefore keep the original modes together rather than an arbitrary basis.
void deal_members(Assignment& a) {
  const auto& irreps = a.group.group.character_table.irreps;
  const Eigen::VectorXd& frequencies = a.harmonic.frequencies_cm1;
  a.members.assign(a.pending.size(), {});
  for (std::size_t c = 0; c < a.clusters.size(); ++c) {
    const auto& cluster = a.clusters[c];
    std::map<int, std::vector<int>> modes_of_species;
    for (std::size_t k = 0; k < cluster.size(); ++k)
      modes_of_species[a.cluster_species[c][k]].push_back(cluster[k]);
    for (auto& [irrep, list] : modes_of_species) {
      std::stable_sort(list.begin(), list.end(),
                       [&](int x, int y) { return frequencies[x] < frequencies[y]; });
      std::vector<int> sets;
      for (std::size_t s = 0; s < a.pending.size(); ++s)
        if (a.pending[s].cluster_index == static_cast<int>(c) && a.pending[s].irrep == irrep)
          sets.push_back(static_cast<int>(s));
      if (sets.empty()) continue;  // reported later as an unassigned mode
      const std::size_t dimension = static_cast<std::size_t>(irreps[irrep].dimension);
      for (std::size_t k = 0; k < list.size(); ++k)
        a.members[sets[std::min(k / dimension, sets.size() - 1)]].push_back(list[k]);
    }
  }
}

// Several sets of one species in a cluster (accidental degeneracy): each set spans the
// species part of its own member modes, so that members and basis agree even when
// the frequencies are exactly equal.
void respan_shared_sets(Assignment& a) {
  constexpr double negligible = 1e-6;  // a projection this short adds no direction
  const Eigen::MatrixXd& modes = a.harmonic.mass_weighted_modes;
  for (std::size_t s = 0; s < a.pending.size(); ++s) {
    PendingSet& p = a.pending[s];
    if (!p.shared || a.members[s].empty()) continue;
    Eigen::MatrixXd spanned(modes.rows(), 0);
    for (int m : a.members[s]) {
      Eigen::VectorXd v = p.species_part * (p.species_part.transpose() * modes.col(m));
      if (spanned.cols() > 0) v -= spanned * (spanned.transpose() * v);
      if (v.norm() < negligible) continue;
      spanned.conservativeResize(Eigen::NoChange, spanned.cols() + 1);
      spanned.col(spanned.cols() - 1) = v.normalized();
    }
    if (spanned.cols() != p.basis.cols()) continue;  // keep the frequency-ordered basis
    p.basis = spanned;
    p.blocks = normal_coordinate_operations(a.group, spanned, a.frame);
  }
}

double mean_frequency(const Assignment& a, int s) {
  double sum = 0.0;
  for (int m : a.members[s]) sum += a.harmonic.frequencies_cm1[m];
  return a.members[s].empty() ? 0.0 : sum / a.members[s].size();
}

// The record of one pending set: members, species, frequencies, adapted basis, purity.
ModeSet finish_set(const Assignment& a, int s) {
  const PendingSet& p = a.pending[s];
  const Irrep& irrep = a.group.group.character_table.irreps[p.irrep];
  const Eigen::MatrixXd& modes = a.harmonic.mass_weighted_modes;
  const Eigen::VectorXd& frequencies = a.harmonic.frequencies_cm1;
  ModeSet set;
  set.modes = a.members[s];
  std::sort(set.modes.begin(), set.modes.end());
  set.irrep = p.irrep;
  set.species = irrep.label;
  set.display_species = irrep.display_label;
  set.ir_active = irrep.ir_active;
  set.raman_active = irrep.raman_active;
  if (!set.modes.empty()) {
    double low = frequencies[set.modes.front()], high = low;
    for (int m : set.modes) {
      low = std::min(low, frequencies[m]);
      high = std::max(high, frequencies[m]);
    }
    set.frequency_cm1 = mean_frequency(a, s);
    set.frequency_spread_cm1 = high - low;
  }
  Eigen::MatrixXd original(modes.rows(), set.modes.size());
  for (std::size_t k = 0; k < set.modes.size(); ++k) original.col(k) = modes.col(set.modes[k]);
  const Eigen::MatrixXd rotation = adapt_basis(a.group, p.basis, p.blocks, original);
  set.adapted_modes = p.basis * rotation;
  set.operation_matrices = change_basis(p.blocks, rotation);
  const int d = static_cast<int>(set.adapted_modes.cols());
  for (const auto& matrix : set.operation_matrices)
    set.invariance_residual =
        std::max(set.invariance_residual,
                 (matrix.transpose() * matrix - Eigen::MatrixXd::Identity(d, d)).cwiseAbs().maxCoeff());
  set.purity = species_projector(a.group.group, irrep, set.operation_matrices).trace() / d;
  return set;
}

// Per-mode species of the members of a finished set.
void label_members(const Assignment& a, const ModeSet& set, int index, ModeSymmetryResult& result) {
  const Eigen::MatrixXd projector = species_projector(
      a.group.group, a.group.group.character_table.irreps[set.irrep], set.operation_matrices);
  for (int m : set.modes) {
    ModeSpecies& ms = result.modes[m];
    ms.set = index;
    ms.irrep = set.irrep;
    ms.species = set.species;
    ms.display_species = set.display_species;
    ms.ir_active = set.ir_active;
    ms.raman_active = set.raman_active;
    // The part of the mode inside its set, projected onto the species.
    const Eigen::VectorXd inside = set.adapted_modes.transpose() * a.harmonic.mass_weighted_modes.col(m);
    ms.purity = inside.dot(projector * inside);
  }
}

// Finished sets in ascending frequency, per-mode species, counts; true when every set is
// pure and every mode assigned.
bool finish_sets(const Assignment& a, const ModeSpeciesOptions& options, ModeSymmetryResult& result) {
  std::vector<int> set_order(a.pending.size());
  std::iota(set_order.begin(), set_order.end(), 0);
  std::stable_sort(set_order.begin(), set_order.end(),
                   [&](int x, int y) { return mean_frequency(a, x) < mean_frequency(a, y); });
  bool pure = true;
  for (int s : set_order) {
    ModeSet set = finish_set(a, s);
    const int d = static_cast<int>(set.adapted_modes.cols());
    if (set.purity < 1.0 - options.purity_tolerance || static_cast<int>(set.modes.size()) != d) {
      pure = false;
      result.warnings.push_back("set of " + std::to_string(set.modes.size()) + " mode(s) near " +
                                format_number(set.frequency_cm1, 6) + " cm⁻¹ assigned " + set.species +
                                " with purity " + format_number(set.purity, 4));
    }
    const int index = static_cast<int>(result.sets.size());
    label_members(a, set, index, result);
    result.assigned_multiplicities[set.irrep] += 1;
    result.sets.push_back(std::move(set));
  }
  for (std::size_t m = 0; m < result.modes.size(); ++m)
    if (result.modes[m].set < 0) {
      pure = false;
      result.warnings.push_back("mode " + std::to_string(m + 1) + " could not be assigned a species");
    }
  return pure;
}

}  // namespace

ModeSymmetryResult assign_mode_species(const PointGroupResult& group, const HarmonicResult& harmonic,
                                       const ModeSpeciesOptions& options) {
  check_assignment_input(group, harmonic, options);
  const PointGroup& pg = group.group;
  ModeSymmetryResult result;
  result.frame = harmonic_frame(group, harmonic, options);
  const int mode_count = static_cast<int>(harmonic.mass_weighted_modes.cols());
  result.modes.assign(mode_count, {});
  result.expected_multiplicities = vibrational_decomposition(group);
  result.assigned_multiplicities.assign(pg.character_table.irreps.size(), 0);

  Assignment a{group, harmonic, result.frame, {}, {}, {}, {}, {}};
  a.clusters = frequency_chains(harmonic.frequencies_cm1, options.degeneracy_tolerance_cm1);
  for (auto& cluster : a.clusters) std::sort(cluster.begin(), cluster.end());
  a.cluster_species.resize(a.clusters.size());
  for (std::size_t c = 0; c < a.clusters.size(); ++c) project_cluster(a, c);
  deal_members(a);
  respan_shared_sets(a);
  result.warnings = a.warnings;
  const bool pure = finish_sets(a, options, result);

  const bool counts_agree = result.assigned_multiplicities == result.expected_multiplicities;
  if (!counts_agree)
    result.warnings.push_back("species counts of the modes (" +
                              format_decomposition(pg, result.assigned_multiplicities, false) +
                              ") differ from the decomposition of the geometry (" +
                              format_decomposition(pg, result.expected_multiplicities, false) + ")");
  result.status = pure && counts_agree && result.warnings.empty() ? ModeSymmetryStatus::Assigned
                                                                  : ModeSymmetryStatus::Ambiguous;
  result.decomposition = format_decomposition(pg, result.assigned_multiplicities, false);
  result.display_decomposition = format_decomposition(pg, result.assigned_multiplicities, true);
  result.message = pg.name + ": " + result.decomposition + " (" + std::to_string(mode_count) + " modes in " +
                   std::to_string(result.sets.size()) + " sets)" +
                   (result.status == ModeSymmetryStatus::Assigned ? "" : "; ambiguous, see warnings");
  return result;
}

}  // namespace overtone
