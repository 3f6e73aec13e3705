#include "symmetry/mode_symmetry.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <numeric>
#include <utility>

#include "core/error.hpp"

namespace overtone {

Multiplicity as_multiplicity(double value) {
  Multiplicity m;
  const double rounded = std::round(value);
  m.count = static_cast<int>(rounded);
  m.integral = std::abs(value - rounded) <= multiplicity_tolerance;
  return m;
}

namespace {

// Sets sorted by their first mode, each ascending; species reordered alike.
void canonical_order(std::vector<std::vector<int>>& sets, std::vector<std::string>& species) {
  for (auto& members : sets) std::sort(members.begin(), members.end());
  std::vector<std::size_t> order(sets.size());
  std::iota(order.begin(), order.end(), 0);
  std::stable_sort(order.begin(), order.end(),
                   [&](std::size_t a, std::size_t b) { return sets[a].front() < sets[b].front(); });
  std::vector<std::vector<int>> sorted_sets;
  std::vector<std::string> sorted_species;
  for (std::size_t k : order) {
    sorted_sets.push_back(std::move(sets[k]));
    sorted_species.push_back(std::move(species[k]));
  }
  sets = std::move(sorted_sets);
  species = std::move(sorted_species);
}

// R(E) = LᵀL equals the identity to round-off (~1e-15); a visibly different first matrix
// means the operations are not in group order.
constexpr double identity_tolerance = 1e-6;

}  // namespace

ModeSymmetry::ModeSymmetry(std::vector<Eigen::MatrixXd> operations, std::vector<std::string> operation_names,
                           std::vector<std::vector<int>> sets, std::vector<SpeciesCharacters> irreps,
                           std::vector<std::string> set_species, std::string point_group)
    : point_group_(std::move(point_group)),
      operation_names_(std::move(operation_names)),
      operations_(std::move(operations)),
      irreps_(std::move(irreps)) {
  if (operations_.empty())
    throw Error("a mode symmetry needs at least one operation (the identity), got none");
  const Eigen::Index m = operations_.front().rows();
  for (const auto& r : operations_)
    if (r.rows() != m || r.cols() != m)
      throw Error(fmt::format("a symmetry matrix on the normal coordinates is {}x{}, expected {}x{}",
                              r.rows(), r.cols(), m, m));
  if ((operations_.front() - Eigen::MatrixXd::Identity(m, m)).cwiseAbs().maxCoeff() > identity_tolerance)
    throw Error("the first operation on the normal coordinates is not the identity");
  if (operation_names_.size() != operations_.size())
    throw Error(
        fmt::format("got {} operation names for {} operations", operation_names_.size(), operations_.size()));
  for (const auto& irrep : irreps_)
    if (irrep.characters.size() != operations_.size())
      throw Error(fmt::format("irrep '{}' has {} characters, expected one per operation ({})", irrep.label,
                              irrep.characters.size(), operations_.size()));
  if (set_species.empty()) set_species.assign(sets.size(), "");
  if (set_species.size() != sets.size())
    throw Error(fmt::format("got {} set species for {} sets", set_species.size(), sets.size()));
  set_of_mode_.assign(static_cast<std::size_t>(m), -1);
  for (const auto& members : sets) {
    if (members.empty()) throw Error("a degenerate set of the modes is empty");
    for (int mode : members) {
      if (mode < 0 || mode >= m || set_of_mode_[static_cast<std::size_t>(mode)] >= 0)
        throw Error(
            fmt::format("the degenerate sets do not partition the modes 0..{} (mode {})", m - 1, mode));
      set_of_mode_[static_cast<std::size_t>(mode)] = 0;
    }
  }
  if (std::find(set_of_mode_.begin(), set_of_mode_.end(), -1) != set_of_mode_.end())
    throw Error(fmt::format("the degenerate sets do not cover all {} modes", m));
  canonical_order(sets, set_species);
  sets_ = std::move(sets);
  set_species_ = std::move(set_species);
  species_.assign(static_cast<std::size_t>(m), "");
  for (std::size_t s = 0; s < sets_.size(); ++s)
    for (int mode : sets_[s]) {
      set_of_mode_[static_cast<std::size_t>(mode)] = static_cast<int>(s);
      species_[static_cast<std::size_t>(mode)] = set_species_[s];
    }

  for (const auto& r : operations_) {
    representation_error_ = std::max(
        representation_error_, (r.transpose() * r - Eigen::MatrixXd::Identity(m, m)).cwiseAbs().maxCoeff());
    for (Eigen::Index i = 0; i < m; ++i)
      for (Eigen::Index j = 0; j < m; ++j)
        if (set_of_mode_[static_cast<std::size_t>(i)] != set_of_mode_[static_cast<std::size_t>(j)])
          representation_error_ = std::max(representation_error_, std::abs(r(i, j)));
  }
  for (const auto& members : sets_) {
    const auto d = static_cast<Eigen::Index>(members.size());
    std::vector<std::array<double, 4>> per_operation;
    for (const auto& r : operations_) {
      Eigen::MatrixXd block(d, d);
      for (Eigen::Index a = 0; a < d; ++a)
        for (Eigen::Index b = 0; b < d; ++b)
          block(a, b) = r(members[static_cast<std::size_t>(a)], members[static_cast<std::size_t>(b)]);
      std::array<double, 4> sums{};
      Eigen::MatrixXd power = block;
      for (std::size_t k = 0; k < 4; ++k) {
        if (k > 0) power = (power * block).eval();
        sums[k] = power.trace();
      }
      per_operation.push_back(sums);
    }
    power_sums_.push_back(std::move(per_operation));
  }
}

std::vector<std::vector<int>> frequency_chains(const Eigen::VectorXd& frequencies_cm1, double tolerance_cm1) {
  std::vector<int> ascending(static_cast<std::size_t>(frequencies_cm1.size()));
  std::iota(ascending.begin(), ascending.end(), 0);
  std::stable_sort(ascending.begin(), ascending.end(),
                   [&](int a, int b) { return frequencies_cm1[a] < frequencies_cm1[b]; });
  std::vector<std::vector<int>> chains;
  for (std::size_t k = 0; k < ascending.size(); ++k) {
    const int mode = ascending[k];
    if (k == 0 || frequencies_cm1[mode] - frequencies_cm1[ascending[k - 1]] > tolerance_cm1)
      chains.emplace_back();
    chains.back().push_back(mode);
  }
  return chains;
}

ModeSymmetry ModeSymmetry::without_group(const Eigen::VectorXd& frequencies_cm1, double tolerance_cm1) {
  if (!(tolerance_cm1 >= 0.0))
    throw Error(fmt::format("degeneracy tolerance must be non-negative (cm-1), got {}", tolerance_cm1));
  const auto m = static_cast<Eigen::Index>(frequencies_cm1.size());
  return ModeSymmetry({Eigen::MatrixXd::Identity(m, m)}, {"E"},
                      frequency_chains(frequencies_cm1, tolerance_cm1));
}

std::vector<Eigen::MatrixXd> ModeSymmetry::block_operations() const {
  std::vector<Eigen::MatrixXd> result = operations_;
  for (auto& r : result)
    for (Eigen::Index i = 0; i < r.rows(); ++i)
      for (Eigen::Index j = 0; j < r.cols(); ++j)
        if (set_of_mode_[static_cast<std::size_t>(i)] != set_of_mode_[static_cast<std::size_t>(j)])
          r(i, j) = 0.0;
  return result;
}

double ModeSymmetry::symmetric_power_character(int set, int power, std::size_t operation) const {
  const std::array<double, 4>& p = power_sums_[static_cast<std::size_t>(set)][operation];
  switch (power) {
    case 1:
      return p[0];
    case 2:
      return (p[0] * p[0] + p[1]) / 2.0;
    case 3:
      return (p[0] * p[0] * p[0] + 3.0 * p[0] * p[1] + 2.0 * p[2]) / 6.0;
    case 4:
      return (std::pow(p[0], 4) + 6.0 * p[0] * p[0] * p[1] + 3.0 * p[1] * p[1] + 8.0 * p[0] * p[2] +
              6.0 * p[3]) /
             24.0;
  }
  throw Error(fmt::format("symmetric powers are available from 1 to 4, got {}", power));
}

std::vector<double> ModeSymmetry::set_characters(int set) const {
  std::vector<double> characters;
  for (std::size_t g = 0; g < order(); ++g) characters.push_back(symmetric_power_character(set, 1, g));
  return characters;
}

std::vector<double> ModeSymmetry::symmetric_square_characters(int set) const {
  std::vector<double> characters;
  for (std::size_t g = 0; g < order(); ++g) characters.push_back(symmetric_power_character(set, 2, g));
  return characters;
}

std::vector<double> ModeSymmetry::antisymmetric_square_characters(int set) const {
  std::vector<double> characters;
  for (const auto& p : power_sums_[static_cast<std::size_t>(set)])
    characters.push_back((p[0] * p[0] - p[1]) / 2.0);
  return characters;
}

std::vector<double> ModeSymmetry::multiplicities(const std::vector<double>& characters) const {
  if (characters.size() != order())
    throw Error(fmt::format("a representation has {} characters, expected one per operation ({})",
                            characters.size(), order()));
  std::vector<double> result;
  for (const auto& irrep : irreps_) {
    double overlap = 0.0, norm = 0.0;
    for (std::size_t g = 0; g < characters.size(); ++g) {
      overlap += characters[g] * irrep.characters[g];
      norm += irrep.characters[g] * irrep.characters[g];
    }
    result.push_back(overlap / norm);
  }
  return result;
}

std::string ModeSymmetry::species_label(const std::vector<double>& characters) const {
  if (!has_character_table()) return "";
  const std::vector<double> counts = multiplicities(characters);
  std::string label;
  for (std::size_t k = 0; k < counts.size(); ++k) {
    const Multiplicity count = as_multiplicity(counts[k]);
    if (!count.integral || count.count < 0) return "";
    if (count.count == 0) continue;
    if (!label.empty()) label += " + ";
    if (count.count > 1) label += std::to_string(count.count);
    label += irreps_[k].label;
  }
  return label;
}

double ModeSymmetry::invariant_count(const int* sorted_sets, std::size_t count) const {
  double total = 0.0;
  for (std::size_t g = 0; g < order(); ++g) {
    double product = 1.0;
    for (std::size_t first = 0; first < count;) {
      std::size_t last = first + 1;
      while (last < count && sorted_sets[last] == sorted_sets[first]) ++last;
      product *= symmetric_power_character(sorted_sets[first], static_cast<int>(last - first), g);
      first = last;
    }
    total += product;
  }
  return total / static_cast<double>(order());
}

namespace {

// A rule allows a coupling unless its multiplicity is (within round-off) zero.
bool allowed(double invariants) { return as_multiplicity(invariants).count >= 1; }

}  // namespace

bool ModeSymmetry::overtone_couples(int lower, int upper) const {
  const std::array<int, 3> block =
      lower < upper ? std::array<int, 3>{lower, lower, upper} : std::array<int, 3>{upper, lower, lower};
  return allowed(invariant_count(block));
}

bool ModeSymmetry::combination_couples(int first, int second, int upper) const {
  std::array<int, 3> block{first, second, upper};
  std::sort(block.begin(), block.end());
  return allowed(invariant_count(block));
}

bool ModeSymmetry::overtones_couple(int first, int second) const {
  const int low = std::min(first, second), high = std::max(first, second);
  return allowed(invariant_count(std::array<int, 4>{low, low, high, high}));
}

std::vector<Eigen::MatrixXd> normal_coordinate_operations(const PointGroupResult& group,
                                                          const Eigen::MatrixXd& modes,
                                                          CoordinateFrame frame) {
  std::vector<Eigen::MatrixXd> operations;
  for (int g = 0; g < group.group.order(); ++g)
    operations.push_back(modes.transpose() * apply_operation(group, g, modes, frame));
  return operations;
}

ModeSymmetry mode_symmetry(const PointGroupResult& group, const ModeSymmetryResult& assignment,
                           const Eigen::MatrixXd& modes) {
  const auto m = static_cast<int>(modes.cols());
  if (assignment.modes.size() != static_cast<std::size_t>(m))
    throw Error(fmt::format("the mode species cover {} modes, the normal coordinates are {}",
                            assignment.modes.size(), m));
  std::vector<std::vector<int>> sets;
  std::vector<std::string> set_species;
  std::vector<bool> placed(static_cast<std::size_t>(m), false);
  for (const ModeSet& set : assignment.sets) {
    if (set.modes.empty()) continue;
    sets.push_back(set.modes);
    set_species.push_back(set.species);
    for (int mode : set.modes) placed[static_cast<std::size_t>(mode)] = true;
  }
  for (int mode = 0; mode < m; ++mode)
    if (!placed[static_cast<std::size_t>(mode)]) {
      sets.push_back({mode});
      set_species.emplace_back();
    }
  const PointGroup& pg = group.group;
  std::vector<std::string> names;
  for (const auto& op : pg.operations) names.push_back(op.ascii_name);
  std::vector<SpeciesCharacters> irreps;
  for (const auto& irrep : pg.character_table.irreps) {
    SpeciesCharacters characters;
    characters.label = irrep.label;
    characters.ir_active = irrep.ir_active;
    characters.raman_active = irrep.raman_active;
    for (const auto& op : pg.operations)
      characters.characters.push_back(irrep.characters[static_cast<std::size_t>(op.class_index)]);
    irreps.push_back(std::move(characters));
  }
  return ModeSymmetry(normal_coordinate_operations(group, modes, assignment.frame), std::move(names),
                      std::move(sets), std::move(irreps), std::move(set_species), pg.name);
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
  result.harmonic = harmonic;
  for (const auto& set : species.sets) {
    if (set.modes.size() < 2 || set.adapted_modes.cols() != static_cast<Eigen::Index>(set.modes.size()) ||
        set.adapted_modes.rows() != n)
      continue;
    for (std::size_t c = 0; c < set.modes.size(); ++c)
      replace_mode_vector(result.harmonic, set.modes[c], set.adapted_modes.col(static_cast<Eigen::Index>(c)));
  }
  result.symmetry = mode_symmetry(group, species, result.harmonic.mass_weighted_modes);
  return result;
}

}  // namespace overtone
