#include "symmetry/mode_symmetry.hpp"

#include <algorithm>
#include <cmath>
#include <map>
#include <numeric>
#include <sstream>

#include "core/error.hpp"
#include "symmetry/geometry.hpp"

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
    const long rounded = std::lround(multiplicities[k]);
    // Multiplicities of a true representation are integers; rounding noise is ~1e-12.
    if (std::abs(multiplicities[k] - rounded) > 1e-6)
      throw Error("vibrational representation has a non-integer multiplicity " +
                  format_number(multiplicities[k], 8) + " of " + group.group.character_table.irreps[k].label);
    counts.push_back(static_cast<int>(rounded));
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
  Eigen::Vector3d center = Eigen::Vector3d::Zero();
  for (int i = 0; i < n; ++i) center += masses[i] * coordinates.segment<3>(3 * i);
  center /= masses.sum();
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

// Bᵀ·D(g)·B for every operation g.
std::vector<Eigen::MatrixXd> operation_blocks(const PointGroupResult& group, const Eigen::MatrixXd& basis,
                                              CoordinateFrame frame) {
  std::vector<Eigen::MatrixXd> blocks;
  Eigen::MatrixXd image(basis.rows(), basis.cols());
  for (int g = 0; g < group.group.order(); ++g) {
    const Eigen::Matrix3d r = group.operation_matrix(g, frame);
    const auto& permutation = group.permutations[g];
    for (int i = 0; i < atom_count(group); ++i)
      image.middleRows<3>(3 * permutation[i]).noalias() = r * basis.middleRows<3>(3 * i);
    blocks.push_back(basis.transpose() * image);
  }
  return blocks;
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
  // Operations diagonal in the symmetry frame commute; their common eigenvectors label partners.
  std::vector<int> diagonal;
  for (int g = 0; g < pg.order(); ++g) {
    const Eigen::Matrix3d& r = pg.operations[g].matrix;
    if ((r - Eigen::Matrix3d(r.diagonal().asDiagonal())).cwiseAbs().maxCoeff() < 1e-9) diagonal.push_back(g);
  }
  Eigen::MatrixXd combination = Eigen::MatrixXd::Zero(d, d);
  for (std::size_t k = 0; k < diagonal.size(); ++k) {
    const Eigen::MatrixXd& a = blocks[diagonal[k]];
    combination += std::ldexp(1.0, static_cast<int>(k)) * 0.5 * (a + a.transpose());
  }
  Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> solver(combination);
  Eigen::MatrixXd u = solver.eigenvectors();
  const Eigen::VectorXd values = solver.eigenvalues();
  // Within a block of equal eigenvalues the partners are not fixed by those operations:
  // follow the original modes (Gram–Schmidt of their projections onto the block).
  const Eigen::MatrixXd original_in_set = basis.transpose() * original_modes;
  for (int start = 0; start < d;) {
    int end = start + 1;
    while (end < d && std::abs(values[end] - values[start]) < 1e-6) ++end;
    if (end - start > 1) {
      const Eigen::MatrixXd block = u.middleCols(start, end - start);
      Eigen::MatrixXd chosen(d, 0);
      for (int m = 0; m < original_in_set.cols() && chosen.cols() < end - start; ++m) {
        Eigen::VectorXd v = block * (block.transpose() * original_in_set.col(m));
        if (chosen.cols() > 0) v -= chosen * (chosen.transpose() * v);
        if (v.norm() < 1e-6) continue;
        chosen.conservativeResize(d, chosen.cols() + 1);
        chosen.col(chosen.cols() - 1) = v.normalized();
      }
      for (int k = 0; k < block.cols() && chosen.cols() < end - start; ++k) {
        Eigen::VectorXd v = block.col(k) - chosen * (chosen.transpose() * block.col(k));
        if (v.norm() < 1e-6) continue;
        chosen.conservativeResize(d, chosen.cols() + 1);
        chosen.col(chosen.cols() - 1) = v.normalized();
      }
      u.middleCols(start, end - start) = chosen;
    }
    start = end;
  }
  // Order partners like x, y, z: a partner whose signs under the diagonal operations
  // match those of a coordinate axis takes that axis's place.
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
  // Signs: partner 1 with its largest component positive; the others so that a
  // reference operation turns partner k−1 positively into partner k (C_n about z for
  // axial groups, C3 about (1,1,1) for cubic ones) where it connects them.
  auto flip_to_positive_largest = [&](int k) {
    const Eigen::VectorXd column = basis * sorted.col(k);
    column.cwiseAbs().maxCoeff(&largest);
    if (column(largest) < 0.0) sorted.col(k) *= -1.0;
  };
  flip_to_positive_largest(0);
  // Reference: the z-axis operation with the smallest positive turn in the xy plane
  // (C_n, or S_2n where that is finer); for cubic groups the C3 about (1, 1, 1).
  int reference = -1;
  double smallest_turn = 10.0;
  const Eigen::Vector3d body_diagonal = Eigen::Vector3d(1, 1, 1).normalized();
  for (int g = 0; g < pg.order(); ++g) {
    const auto& op = pg.operations[g];
    if (op.axis.isZero()) continue;
    if (std::abs(std::abs(op.axis.z()) - 1.0) < 1e-9) {
      const double turn = std::atan2(op.matrix(1, 0), op.matrix(0, 0));
      if (turn > 1e-9 && turn < smallest_turn) {
        smallest_turn = turn;
        reference = g;
      }
    } else if (op.proper && op.axis.dot(body_diagonal) > 1.0 - 1e-9 && op.name == "C₃" &&
               smallest_turn > 9.0) {
      reference = g;
      smallest_turn = 9.0;
    }
  }
  for (int k = 1; k < d; ++k) {
    const double turned = reference >= 0 ? sorted.col(k).dot(blocks[reference] * sorted.col(k - 1)) : 0.0;
    if (std::abs(turned) <= 1e-6)
      flip_to_positive_largest(k);
    else if (turned < 0.0)
      sorted.col(k) *= -1.0;
  }
  return sorted;
}

}  // namespace

ModeSymmetryResult assign_mode_species(const PointGroupResult& group, const HarmonicResult& harmonic,
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
  for (int i = 0; i < n; ++i)
    if (std::abs(harmonic.masses_da[i] - group.masses_da[i]) > 1e-6)
      throw Error("mass of atom " + std::to_string(i + 1) + " is " + format_number(harmonic.masses_da[i], 8) +
                  " Da in the harmonic analysis but " + format_number(group.masses_da[i], 8) +
                  " Da in the symmetry detection; detect the group with the same isotopes");
  check_size(group, harmonic.mass_weighted_modes.rows(), "mode matrix");
  const PointGroup& pg = group.group;
  const auto& irreps = pg.character_table.irreps;

  ModeSymmetryResult result;
  const double frame_tolerance = options.frame_check_tolerance_angstrom >= 0.0
                                     ? options.frame_check_tolerance_angstrom
                                     : 2.0 * group.tolerance_angstrom;
  const double input_deviation =
      frame_deviation(group, harmonic.coordinates_angstrom, harmonic.masses_da, CoordinateFrame::File);
  const double symmetry_frame_deviation =
      frame_deviation(group, harmonic.coordinates_angstrom, harmonic.masses_da, CoordinateFrame::Symmetry);
  if (input_deviation <= frame_tolerance)
    result.frame = CoordinateFrame::File;
  else if (symmetry_frame_deviation <= frame_tolerance)
    result.frame = CoordinateFrame::Symmetry;
  else
    throw Error("the harmonic geometry does not have the symmetry of " + pg.name +
                " in the detection's file or symmetry frame (largest displacement " +
                format_number(std::min(input_deviation, symmetry_frame_deviation), 3) + " Å, allowed " +
                format_number(frame_tolerance, 3) +
                " Å); detect the group on the geometry the modes were computed at");
  const CoordinateFrame frame = result.frame;

  const Eigen::MatrixXd& modes = harmonic.mass_weighted_modes;
  const Eigen::VectorXd& frequencies = harmonic.frequencies_cm1;
  const int mode_count = static_cast<int>(modes.cols());
  result.modes.assign(mode_count, {});
  result.expected_multiplicities = vibrational_decomposition(group);
  result.assigned_multiplicities.assign(irreps.size(), 0);

  // Candidate sets: chains of modes closer than the tolerance in frequency.
  std::vector<int> by_frequency(mode_count);
  std::iota(by_frequency.begin(), by_frequency.end(), 0);
  std::stable_sort(by_frequency.begin(), by_frequency.end(),
                   [&](int a, int b) { return frequencies[a] < frequencies[b]; });
  std::vector<std::vector<int>> clusters;
  for (int k = 0; k < mode_count; ++k) {
    const int mode = by_frequency[k];
    if (k == 0 || frequencies[mode] - frequencies[by_frequency[k - 1]] > options.degeneracy_tolerance_cm1)
      clusters.emplace_back();
    clusters.back().push_back(mode);
  }

  struct PendingSet {
    Eigen::MatrixXd basis;                // 3N×d
    std::vector<Eigen::MatrixXd> blocks;  // basisᵀ·D(g)·basis
    int irrep;
    int cluster_index;
    Eigen::MatrixXd species_part;  // 3N×(copies·d): the cluster's whole part of this species
    bool shared = false;           // the cluster holds several sets of this species
  };
  std::vector<PendingSet> pending;
  std::vector<std::vector<int>> cluster_species(
      clusters.size());  // per cluster member: species holding most of it
  for (std::size_t cluster_index = 0; cluster_index < clusters.size(); ++cluster_index) {
    auto& cluster = clusters[cluster_index];
    std::sort(cluster.begin(), cluster.end());
    const int c = static_cast<int>(cluster.size());
    Eigen::MatrixXd cluster_basis(modes.rows(), c);
    for (int k = 0; k < c; ++k) cluster_basis.col(k) = modes.col(cluster[k]);
    const auto blocks = operation_blocks(group, cluster_basis, frame);
    Eigen::VectorXd cluster_frequencies(c);
    for (int k = 0; k < c; ++k) cluster_frequencies[k] = frequencies[cluster[k]];
    int covered = 0;
    Eigen::VectorXd best_weight = Eigen::VectorXd::Constant(c, -1.0);
    cluster_species[cluster_index].assign(c, -1);
    for (std::size_t a = 0; a < irreps.size(); ++a) {
      const Eigen::MatrixXd projector = species_projector(pg, irreps[a], blocks);
      for (int k = 0; k < c; ++k)
        if (projector(k, k) > best_weight[k]) {
          best_weight[k] = projector(k, k);
          cluster_species[cluster_index][k] = static_cast<int>(a);
        }
      const double weight = projector.trace();
      const int count = static_cast<int>(std::lround(weight));
      if (count < 1) continue;
      // The species' part of the cluster: the projector's eigenvectors of largest eigenvalue.
      Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> solver(projector);
      const Eigen::MatrixXd part = solver.eigenvectors().rightCols(count);
      const int dimension = irreps[a].dimension;
      if (count % dimension != 0)
        result.warnings.push_back("modes near " + format_number(cluster_frequencies.mean(), 6) +
                                  " cm⁻¹ have " + std::to_string(count) + " dimensions of " +
                                  irreps[a].label + ", not a multiple of its dimension " +
                                  std::to_string(dimension));
      // Several copies of one species in a cluster (accidental degeneracy): split by frequency.
      Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> by_freq(part.transpose() *
                                                             cluster_frequencies.asDiagonal() * part);
      const Eigen::MatrixXd ordered = part * by_freq.eigenvectors();
      for (int start = 0; start < count; start += dimension) {
        const int width = std::min(dimension, count - start);
        const Eigen::MatrixXd local = ordered.middleCols(start, width);
        pending.push_back({cluster_basis * local, change_basis(blocks, local), static_cast<int>(a),
                           static_cast<int>(cluster_index), cluster_basis * part, count > dimension});
      }
      covered += count;
    }
    if (covered != c)
      result.warnings.push_back("modes near " + format_number(cluster_frequencies.mean(), 6) +
                                " cm⁻¹: projections cover " + std::to_string(covered) + " of " +
                                std::to_string(c) +
                                " dimensions; the modes do not carry the group's symmetry");
  }

  // Members: each mode of a cluster takes the species holding most of it; the modes of
  // one species are dealt, in frequency order, to that species' sets of the cluster
  // (also in frequency order), dimension by dimension. Exactly equal frequencies of one
  // species therefore keep the original modes together rather than an arbitrary basis.
  std::vector<std::vector<int>> members(pending.size());
  for (std::size_t c = 0; c < clusters.size(); ++c) {
    const auto& cluster = clusters[c];
    std::map<int, std::vector<int>> modes_of_species;
    for (std::size_t k = 0; k < cluster.size(); ++k)
      modes_of_species[cluster_species[c][k]].push_back(cluster[k]);
    for (auto& [irrep, list] : modes_of_species) {
      std::stable_sort(list.begin(), list.end(),
                       [&](int a, int b) { return frequencies[a] < frequencies[b]; });
      std::vector<int> sets;
      for (std::size_t s = 0; s < pending.size(); ++s)
        if (pending[s].cluster_index == static_cast<int>(c) && pending[s].irrep == irrep)
          sets.push_back(static_cast<int>(s));
      if (sets.empty()) continue;  // reported below as an unassigned mode
      const std::size_t dimension = static_cast<std::size_t>(irreps[irrep].dimension);
      for (std::size_t k = 0; k < list.size(); ++k)
        members[sets[std::min(k / dimension, sets.size() - 1)]].push_back(list[k]);
    }
  }

  // Several sets of one species in a cluster (accidental degeneracy): each set spans the
  // species part of its own member modes, so that members and basis agree even when
  // the frequencies are exactly equal.
  for (std::size_t s = 0; s < pending.size(); ++s) {
    PendingSet& p = pending[s];
    if (!p.shared || members[s].empty()) continue;
    Eigen::MatrixXd spanned(modes.rows(), 0);
    for (int m : members[s]) {
      Eigen::VectorXd v = p.species_part * (p.species_part.transpose() * modes.col(m));
      if (spanned.cols() > 0) v -= spanned * (spanned.transpose() * v);
      if (v.norm() < 1e-6) continue;
      spanned.conservativeResize(Eigen::NoChange, spanned.cols() + 1);
      spanned.col(spanned.cols() - 1) = v.normalized();
    }
    if (spanned.cols() != p.basis.cols()) continue;  // keep the frequency-ordered basis
    p.basis = spanned;
    p.blocks = operation_blocks(group, spanned, frame);
  }

  std::vector<int> set_order(pending.size());
  std::iota(set_order.begin(), set_order.end(), 0);
  auto mean_frequency = [&](int s) {
    double sum = 0.0;
    for (int m : members[s]) sum += frequencies[m];
    return members[s].empty() ? 0.0 : sum / members[s].size();
  };
  std::stable_sort(set_order.begin(), set_order.end(),
                   [&](int a, int b) { return mean_frequency(a) < mean_frequency(b); });
  bool impure = false;
  for (int s : set_order) {
    const PendingSet& p = pending[s];
    const Irrep& irrep = irreps[p.irrep];
    ModeSet set;
    set.modes = members[s];
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
      set.frequency_cm1 = mean_frequency(s);
      set.frequency_spread_cm1 = high - low;
    }
    Eigen::MatrixXd original(modes.rows(), set.modes.size());
    for (std::size_t k = 0; k < set.modes.size(); ++k) original.col(k) = modes.col(set.modes[k]);
    const Eigen::MatrixXd rotation = adapt_basis(group, p.basis, p.blocks, original);
    set.adapted_modes = p.basis * rotation;
    set.operation_matrices = change_basis(p.blocks, rotation);
    const int d = static_cast<int>(set.adapted_modes.cols());
    for (const auto& a : set.operation_matrices)
      set.invariance_residual =
          std::max(set.invariance_residual,
                   (a.transpose() * a - Eigen::MatrixXd::Identity(d, d)).cwiseAbs().maxCoeff());
    const Eigen::MatrixXd projector = species_projector(pg, irrep, set.operation_matrices);
    set.purity = projector.trace() / d;
    if (set.purity < 1.0 - options.purity_tolerance || static_cast<int>(set.modes.size()) != d) {
      impure = true;
      result.warnings.push_back("set of " + std::to_string(set.modes.size()) + " mode(s) near " +
                                format_number(set.frequency_cm1, 6) + " cm⁻¹ assigned " + set.species +
                                " with purity " + format_number(set.purity, 4));
    }
    const int index = static_cast<int>(result.sets.size());
    for (int m : set.modes) {
      ModeSpecies& ms = result.modes[m];
      ms.set = index;
      ms.irrep = set.irrep;
      ms.species = set.species;
      ms.display_species = set.display_species;
      ms.ir_active = set.ir_active;
      ms.raman_active = set.raman_active;
      // The part of the mode inside its set, projected onto the species.
      const Eigen::VectorXd inside = set.adapted_modes.transpose() * modes.col(m);
      ms.purity = inside.dot(projector * inside);
    }
    result.assigned_multiplicities[set.irrep] += 1;
    result.sets.push_back(std::move(set));
  }
  for (int m = 0; m < mode_count; ++m)
    if (result.modes[m].set < 0) {
      impure = true;
      result.warnings.push_back("mode " + std::to_string(m + 1) + " could not be assigned a species");
    }
  const bool counts_agree = result.assigned_multiplicities == result.expected_multiplicities;
  if (!counts_agree)
    result.warnings.push_back("species counts of the modes (" +
                              format_decomposition(pg, result.assigned_multiplicities, false) +
                              ") differ from the decomposition of the geometry (" +
                              format_decomposition(pg, result.expected_multiplicities, false) + ")");
  result.status = impure || !counts_agree || !result.warnings.empty() ? ModeSymmetryStatus::Ambiguous
                                                                      : ModeSymmetryStatus::Assigned;
  result.decomposition = format_decomposition(pg, result.assigned_multiplicities, false);
  result.display_decomposition = format_decomposition(pg, result.assigned_multiplicities, true);
  result.message = pg.name + ": " + result.decomposition + " (" + std::to_string(mode_count) + " modes in " +
                   std::to_string(result.sets.size()) + " sets)" +
                   (result.status == ModeSymmetryStatus::Assigned ? "" : "; ambiguous, see warnings");
  return result;
}

}  // namespace overtone
