#include "anharmonic/mode_symmetry.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <numeric>

#include "core/error.hpp"
#include "core/units.hpp"

namespace overtone {

int ModeSymmetry::set_count() const {
  int count = 0;
  for (int id : degenerate_set) count = std::max(count, id + 1);
  return count;
}

std::vector<std::vector<int>> ModeSymmetry::sets() const {
  std::vector<std::vector<int>> result(static_cast<std::size_t>(set_count()));
  for (std::size_t mode = 0; mode < degenerate_set.size(); ++mode)
    result[static_cast<std::size_t>(degenerate_set[mode])].push_back(static_cast<int>(mode));
  return result;
}

namespace {

// Renumbers set ids so that they appear in order of their first mode.
std::vector<int> canonical_set_ids(const std::vector<int>& root_of_mode) {
  std::vector<int> ids(root_of_mode.size(), -1);
  std::vector<int> id_of_root(root_of_mode.size(), -1);
  int next = 0;
  for (std::size_t mode = 0; mode < root_of_mode.size(); ++mode) {
    const int root = root_of_mode[mode];
    if (id_of_root[static_cast<std::size_t>(root)] < 0) id_of_root[static_cast<std::size_t>(root)] = next++;
    ids[mode] = id_of_root[static_cast<std::size_t>(root)];
  }
  return ids;
}

int find_root(std::vector<int>& parent, int i) {
  while (parent[static_cast<std::size_t>(i)] != i) {
    parent[static_cast<std::size_t>(i)] =
        parent[static_cast<std::size_t>(parent[static_cast<std::size_t>(i)])];
    i = parent[static_cast<std::size_t>(i)];
  }
  return i;
}

void assign_species(ModeSymmetry& symmetry) {
  symmetry.species.assign(symmetry.mode_count(), "");
  if (!symmetry.has_character_table()) return;
  for (const auto& members : symmetry.sets()) {
    std::vector<double> characters;
    for (const auto& r : symmetry.operations) {
      double trace = 0.0;
      for (int mode : members) trace += r(mode, mode);
      characters.push_back(trace);
    }
    // A set must carry exactly one irrep once; anything else means the modes were grouped
    // wrongly, and the species stays unknown.
    const std::vector<double> multiplicities = detail::irrep_multiplicities(symmetry, characters);
    int found = -1, total = 0;
    bool integral = true;
    for (std::size_t k = 0; k < multiplicities.size(); ++k) {
      integral = integral && multiplicities[k] == std::round(multiplicities[k]);
      total += static_cast<int>(std::round(multiplicities[k]));
      if (multiplicities[k] == 1.0) found = static_cast<int>(k);
    }
    if (!integral || total != 1 || found < 0) continue;
    for (int mode : members)
      symmetry.species[static_cast<std::size_t>(mode)] =
          symmetry.irreps[static_cast<std::size_t>(found)].label;
  }
}

}  // namespace

ModeSymmetry trivial_mode_symmetry(const HarmonicResult& harmonic, double degeneracy_tolerance_cm1) {
  if (!(degeneracy_tolerance_cm1 >= 0.0))
    throw Error(
        fmt::format("degeneracy tolerance must be non-negative (cm-1), got {}", degeneracy_tolerance_cm1));
  const int m = static_cast<int>(harmonic.mode_count());
  ModeSymmetry symmetry;
  symmetry.operation_names = {"E"};
  symmetry.operations = {Eigen::MatrixXd::Identity(m, m)};
  std::vector<int> root(static_cast<std::size_t>(m));
  for (int k = 0; k < m; ++k) {
    const bool joins_previous =
        k > 0 &&
        std::abs(harmonic.frequencies_cm1[k] - harmonic.frequencies_cm1[k - 1]) <= degeneracy_tolerance_cm1;
    root[static_cast<std::size_t>(k)] = joins_previous ? root[static_cast<std::size_t>(k - 1)] : k;
  }
  symmetry.degenerate_set = canonical_set_ids(root);
  symmetry.species.assign(static_cast<std::size_t>(m), "");
  return symmetry;
}

ModeSymmetry mode_symmetry_from_operations(const HarmonicResult& harmonic,
                                           const std::vector<CartesianSymmetryOperation>& operations,
                                           const std::vector<SpeciesCharacters>& irreps,
                                           double block_tolerance) {
  const Eigen::MatrixXd& modes = harmonic.mass_weighted_modes;
  const Eigen::Index n = modes.rows();
  const int m = static_cast<int>(modes.cols());
  const int atoms = static_cast<int>(n / 3);
  if (operations.empty()) throw Error("a point group needs at least one operation (the identity), got none");
  constexpr double orthogonality_tolerance = 1e-6;  // 3×3 matrices from a symmetry finder are exact to ~1e-12
  for (const auto& irrep : irreps)
    if (irrep.characters.size() != operations.size())
      throw Error(fmt::format("irrep '{}' has {} characters, expected one per operation ({})", irrep.label,
                              irrep.characters.size(), operations.size()));

  ModeSymmetry symmetry;
  symmetry.irreps = irreps;
  int identity = -1;
  std::vector<Eigen::MatrixXd> matrices;
  for (std::size_t g = 0; g < operations.size(); ++g) {
    const auto& op = operations[g];
    if (static_cast<int>(op.atom_permutation.size()) != atoms)
      throw Error(fmt::format("operation '{}' permutes {} atoms, expected {}", op.name,
                              op.atom_permutation.size(), atoms));
    std::vector<int> sorted = op.atom_permutation;
    std::sort(sorted.begin(), sorted.end());
    for (int a = 0; a < atoms; ++a)
      if (sorted[static_cast<std::size_t>(a)] != a)
        throw Error(fmt::format("operation '{}' has an atom permutation that is not a permutation of 0..{}",
                                op.name, atoms - 1));
    const double deviation =
        (op.matrix.transpose() * op.matrix - Eigen::Matrix3d::Identity()).cwiseAbs().maxCoeff();
    if (deviation > orthogonality_tolerance)
      throw Error(
          fmt::format("operation '{}' is not orthogonal: largest |MᵀM − I| is {:.3g}, expected below {}",
                      op.name, deviation, orthogonality_tolerance));
    // Equivalent atoms have equal masses, so the operation acts on mass-weighted
    // displacements exactly as on Cartesian ones.
    Eigen::MatrixXd image(n, m);
    for (int a = 0; a < atoms; ++a)
      image.middleRows(3 * op.atom_permutation[static_cast<std::size_t>(a)], 3) =
          op.matrix * modes.middleRows(3 * a, 3);
    Eigen::MatrixXd r = modes.transpose() * image;
    const bool is_identity =
        (op.matrix - Eigen::Matrix3d::Identity()).cwiseAbs().maxCoeff() < orthogonality_tolerance &&
        std::is_sorted(op.atom_permutation.begin(), op.atom_permutation.end());
    if (is_identity && identity < 0) identity = static_cast<int>(g);
    matrices.push_back(std::move(r));
  }
  if (identity < 0) throw Error("the operations do not include the identity");
  // Identity first; the characters of the irreps are permuted alike.
  std::vector<std::size_t> order(operations.size());
  std::iota(order.begin(), order.end(), 0);
  std::swap(order[0], order[static_cast<std::size_t>(identity)]);
  for (std::size_t g : order) {
    symmetry.operations.push_back(matrices[g]);
    symmetry.operation_names.push_back(operations[g].name);
  }
  for (auto& irrep : symmetry.irreps) {
    std::vector<double> permuted;
    for (std::size_t g : order) permuted.push_back(irrep.characters[g]);
    irrep.characters = permuted;
  }

  std::vector<int> parent(static_cast<std::size_t>(m));
  std::iota(parent.begin(), parent.end(), 0);
  for (const auto& r : symmetry.operations)
    for (int i = 0; i < m; ++i)
      for (int j = 0; j < m; ++j)
        if (i != j && std::abs(r(i, j)) > block_tolerance) {
          const int a = find_root(parent, i), b = find_root(parent, j);
          if (a != b) parent[static_cast<std::size_t>(std::max(a, b))] = std::min(a, b);
        }
  std::vector<int> roots(static_cast<std::size_t>(m));
  for (int i = 0; i < m; ++i) roots[static_cast<std::size_t>(i)] = find_root(parent, i);
  symmetry.degenerate_set = canonical_set_ids(roots);

  double error = 0.0;
  for (const auto& r : symmetry.operations) {
    error = std::max(error, (r.transpose() * r - Eigen::MatrixXd::Identity(m, m)).cwiseAbs().maxCoeff());
    for (int i = 0; i < m; ++i)
      for (int j = 0; j < m; ++j)
        if (symmetry.degenerate_set[static_cast<std::size_t>(i)] !=
            symmetry.degenerate_set[static_cast<std::size_t>(j)])
          error = std::max(error, std::abs(r(i, j)));
  }
  symmetry.representation_error = error;
  assign_species(symmetry);
  return symmetry;
}

SymmetryAdaptedHarmonic adapt_to_point_group(const HarmonicResult& harmonic, const PointGroupResult& group,
                                             const ModeSymmetryResult& species) {
  const Eigen::Index n = harmonic.mass_weighted_modes.rows();
  const int m = static_cast<int>(harmonic.mode_count());
  if (species.modes.size() != static_cast<std::size_t>(m))
    throw Error(
        fmt::format("the mode species cover {} modes, the harmonic result has {}", species.modes.size(), m));
  if (static_cast<Eigen::Index>(3 * group.permutations.front().size()) != n)
    throw Error(fmt::format("the point group is for {} atoms, the harmonic result for {}",
                            group.permutations.front().size(), n / 3));
  SymmetryAdaptedHarmonic result;
  HarmonicResult& adapted = result.harmonic;
  adapted = harmonic;
  for (const auto& set : species.sets) {
    if (set.modes.size() < 2 || set.adapted_modes.cols() != static_cast<Eigen::Index>(set.modes.size()) ||
        set.adapted_modes.rows() != n)
      continue;
    for (std::size_t c = 0; c < set.modes.size(); ++c) {
      const int k = set.modes[c];
      adapted.mass_weighted_modes.col(k) = set.adapted_modes.col(static_cast<Eigen::Index>(c));
      Eigen::VectorXd cartesian(n);
      for (Eigen::Index r = 0; r < n; ++r)
        cartesian[r] = adapted.mass_weighted_modes(r, k) / std::sqrt(harmonic.masses_da[r / 3]);
      const double squared_norm = cartesian.squaredNorm();
      adapted.cartesian_displacements.col(k) = cartesian / std::sqrt(squared_norm);
      adapted.reduced_masses_da[k] = 1.0 / squared_norm;
      adapted.force_constants_mdyn_per_angstrom[k] = adapted.eigenvalues[k] * adapted.reduced_masses_da[k] *
                                                     units::mdyn_per_angstrom_per_kcal_mol_per_angstrom2;
    }
  }
  std::vector<CartesianSymmetryOperation> operations;
  for (int g = 0; g < group.group.order(); ++g) {
    CartesianSymmetryOperation op;
    op.name = group.group.operations[static_cast<std::size_t>(g)].ascii_name;
    op.matrix = group.operation_matrix(g, species.frame);
    op.atom_permutation = group.permutations[static_cast<std::size_t>(g)];
    operations.push_back(op);
  }
  std::vector<SpeciesCharacters> irreps;
  for (const auto& irrep : group.group.character_table.irreps) {
    SpeciesCharacters characters;
    characters.label = irrep.label;
    characters.ir_active = irrep.ir_active;
    characters.raman_active = irrep.raman_active;
    for (const auto& op : group.group.operations)
      characters.characters.push_back(irrep.characters[static_cast<std::size_t>(op.class_index)]);
    irreps.push_back(characters);
  }
  result.symmetry = mode_symmetry_from_operations(adapted, operations, irreps);
  result.symmetry.point_group = group.group.name;
  return result;
}

namespace detail {

double subspace_character(const Eigen::MatrixXd& representation, const Eigen::MatrixXd& basis) {
  return (basis.transpose() * representation * basis).trace();
}

double invariant_multiplicity(const std::vector<double>& characters) {
  if (characters.empty()) return 0.0;
  return std::accumulate(characters.begin(), characters.end(), 0.0) / static_cast<double>(characters.size());
}

std::vector<double> irrep_multiplicities(const ModeSymmetry& symmetry,
                                         const std::vector<double>& characters) {
  std::vector<double> result;
  constexpr double integer_tolerance = 1e-3;
  for (const auto& irrep : symmetry.irreps) {
    double sum = 0.0;
    for (std::size_t g = 0; g < characters.size() && g < irrep.characters.size(); ++g)
      sum += characters[g] * irrep.characters[g];
    // A real pair of complex-conjugate irreps has ⟨χ, χ⟩ = 2|G|: normalize by the norm.
    double norm = 0.0;
    for (double c : irrep.characters) norm += c * c;
    double multiplicity = norm > 0.0 ? sum / norm : 0.0;
    if (std::abs(multiplicity - std::round(multiplicity)) < integer_tolerance)
      multiplicity = std::round(multiplicity);
    result.push_back(multiplicity);
  }
  return result;
}

std::string species_label(const ModeSymmetry& symmetry, const std::vector<double>& characters) {
  if (!symmetry.has_character_table()) return "";
  const std::vector<double> multiplicities = irrep_multiplicities(symmetry, characters);
  std::string label;
  for (std::size_t k = 0; k < multiplicities.size(); ++k) {
    const double count = multiplicities[k];
    if (count != std::round(count) || count < 0.0) return "";
    if (count == 0.0) continue;
    if (!label.empty()) label += " + ";
    if (count > 1.0) label += fmt::format("{}", static_cast<int>(count));
    label += symmetry.irreps[k].label;
  }
  return label;
}

}  // namespace detail

}  // namespace overtone
