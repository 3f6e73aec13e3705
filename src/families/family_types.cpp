#include "families/family_types.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <complex>
#include <map>
#include <numeric>
#include <set>

#include "core/error.hpp"
#include "core/option_checks.hpp"
#include "core/units.hpp"

namespace overtone {

const char* to_string(TimeReversal reversal) {
  switch (reversal) {
    case TimeReversal::same_family:
      return "same_family";
    case TimeReversal::among_copies:
      return "among_copies";
    case TimeReversal::separate_partner:
      return "separate_partner";
  }
  return "unknown";
}

CoordinateSymmetry trivial_symmetry(int dimension) {
  if (dimension < 1) throw Error(fmt::format("symmetry dimension must be at least 1, got {}", dimension));
  CoordinateSymmetry symmetry;
  const Eigen::MatrixXd identity = Eigen::MatrixXd::Identity(dimension, dimension);
  symmetry.group = FiniteGroup::from_elements({identity}, {"E"});
  symmetry.matrices = {identity};
  return symmetry;
}

CoordinateSymmetry symmetry_from_matrices(const std::vector<Eigen::MatrixXd>& generators,
                                          const std::vector<std::string>& generator_names) {
  CoordinateSymmetry symmetry;
  symmetry.group = FiniteGroup::generated_by(generators, generator_names);
  for (int k = 0; k < symmetry.group.order(); ++k) symmetry.matrices.push_back(symmetry.group.matrix(k));
  return symmetry;
}

std::vector<ModeBlock> mode_blocks(const ModeSymmetry& symmetry, const Eigen::VectorXd& angular_frequencies,
                                   const std::vector<int>& mode_numbers) {
  const auto n = static_cast<std::size_t>(angular_frequencies.size());
  if (symmetry.mode_count() != n || (!mode_numbers.empty() && mode_numbers.size() != n))
    throw Error(
        fmt::format("mode blocks need one frequency and number per mode of the symmetry ({}), got {} and {}",
                    symmetry.mode_count(), n, mode_numbers.size()));
  std::vector<ModeBlock> blocks;
  for (int s = 0; s < symmetry.set_count(); ++s) {
    ModeBlock block;
    double sum = 0.0;
    for (const int k : symmetry.sets()[static_cast<std::size_t>(s)]) {
      block.coordinates.push_back(k);
      block.mode_numbers.push_back(mode_numbers.empty() ? k + 1 : mode_numbers[static_cast<std::size_t>(k)]);
      sum += angular_frequencies(k);
    }
    block.angular_frequency = sum / static_cast<double>(block.coordinates.size());
    block.species = symmetry.set_species(s);
    blocks.push_back(std::move(block));
  }
  std::stable_sort(blocks.begin(), blocks.end(), [](const ModeBlock& a, const ModeBlock& b) {
    return a.angular_frequency < b.angular_frequency;
  });
  return blocks;
}

std::vector<ModeBlock> blocks_by_frequency(const Eigen::VectorXd& angular_frequencies,
                                           const UnitConventions& units) {
  return mode_blocks(ModeSymmetry::without_group(angular_frequencies * units.cm1_per_angular_frequency),
                     angular_frequencies);
}

namespace {

using Complex = std::complex<double>;

struct BlockAction {
  Eigen::MatrixXd embedding;              // n × d, unit columns of the block's coordinates
  std::vector<Eigen::MatrixXd> matrices;  // d × d per element
  std::vector<double> characters;
};

BlockAction restrict_to_block(const ModeBlock& block, const CoordinateSymmetry& symmetry, int n,
                              double tolerance, const std::vector<std::string>& labels) {
  BlockAction action;
  const int d = static_cast<int>(block.coordinates.size());
  action.embedding = Eigen::MatrixXd::Zero(n, d);
  for (int j = 0; j < d; ++j) {
    const int coordinate = block.coordinates[j];
    if (coordinate < 0 || coordinate >= n)
      throw Error(fmt::format("mode block coordinate {} is outside 0..{}", coordinate, n - 1));
    action.embedding(coordinate, j) = 1.0;
  }
  for (std::size_t g = 0; g < symmetry.matrices.size(); ++g) {
    const Eigen::MatrixXd image = symmetry.matrices[g] * action.embedding;
    Eigen::MatrixXd restricted = action.embedding.transpose() * image;
    const double leak = (image - action.embedding * restricted).cwiseAbs().maxCoeff();
    if (leak > tolerance)
      throw Error(
          fmt::format("the block of modes {} is not invariant under operation {} (leak {:.3g}); the "
                      "degeneracy tolerance may be too small or the geometry not symmetric",
                      fmt::join(block.mode_numbers, ","), labels[g], leak));
    action.characters.push_back(restricted.trace());
    action.matrices.push_back(std::move(restricted));
  }
  return action;
}

// (1/|H|) Σ_h χ(h) e^{−i k θ(h)}.
double fixed_dimension(const std::vector<double>& characters, const Subgroup& subgroup,
                       const OneDimensionalCharacter& theta, int multiplier) {
  double sum = 0.0;
  for (std::size_t j = 0; j < subgroup.elements.size(); ++j) {
    const double angle = 2.0 * units::pi * multiplier * theta.phase_numerators[j] / theta.phase_denominator;
    sum += characters[subgroup.elements[j]] * std::cos(angle);
  }
  return sum / static_cast<double>(subgroup.elements.size());
}

// A fixed-space dimension is the multiplicity of the twisted character in the block's
// representation: an integer by the one test of the mode symmetry (as_multiplicity).
int rounded_dimension(double value, const std::string& context) {
  const Multiplicity dimension = as_multiplicity(value);
  if (!dimension.integral)
    throw Error(
        fmt::format("fixed-space dimension {} is not an integer for {}: the matrices do not represent the "
                    "group",
                    value, context));
  return dimension.count;
}

// A vector spanning Fix(Σ) in the block (d complex components, unit norm).
Eigen::VectorXcd fixed_vector(const BlockAction& action, const Subgroup& subgroup,
                              const OneDimensionalCharacter& theta) {
  const Eigen::Index d = action.embedding.cols();
  Eigen::MatrixXcd projector = Eigen::MatrixXcd::Zero(d, d);
  for (std::size_t j = 0; j < subgroup.elements.size(); ++j) {
    const double angle = 2.0 * units::pi * theta.phase_numerators[j] / theta.phase_denominator;
    projector += std::polar(1.0, -angle) * action.matrices[subgroup.elements[j]].cast<Complex>();
  }
  projector /= static_cast<double>(subgroup.elements.size());
  Eigen::Index best = 0;
  projector.colwise().norm().maxCoeff(&best);
  return projector.col(best).normalized();
}

bool phase_multiple(const Eigen::VectorXcd& image, const Eigen::VectorXcd& v) {
  constexpr double parallel_tolerance = 1e-7;  // matrices accurate to ~1e-10, far from any real stabilizer
  const Complex c = v.dot(image);              // v unit: c = vᴴ·image
  return (image - c * v).norm() < parallel_tolerance;
}

std::vector<int> negated(const std::vector<int>& numerators, int denominator) {
  std::vector<int> result(numerators.size());
  for (std::size_t j = 0; j < numerators.size(); ++j) result[j] = (denominator - numerators[j]) % denominator;
  return result;
}

PhasedElement phased(int element, int numerator, int denominator, const std::vector<std::string>& labels) {
  PhasedElement e;
  e.element = element;
  e.label = labels[element];
  const int common = std::gcd(numerator, denominator);
  e.numerator = numerator / common;
  e.denominator = denominator / common;
  if (e.numerator == 0) e.denominator = 1;
  return e;
}

bool starts_with(const std::string& text, const std::string& prefix) {
  return text.compare(0, prefix.size(), prefix) == 0;
}

// A power such as C₃² or S₄³ (typographic superscript or ASCII ^): prose names the axis
// by its first power only.
bool is_higher_power(const std::string& label) {
  for (const char* mark : {"²", "³", "⁴", "⁵", "⁶", "⁷", "⁸", "⁹", "^"})
    if (label.find(mark) != std::string::npos) return true;
  return false;
}

// Which operation prose should name as the one that shifts the orbit in time: for half a
// period a mirror plane, then the inversion, then a rotation; for rotating motions a
// proper rotation first. Lower is preferred.
int shift_preference(const std::string& label, int denominator) {
  int kind = 3;
  if (starts_with(label, "σ") || starts_with(label, "sigma"))
    kind = denominator == 2 ? 0 : 2;
  else if (label == "i")
    kind = 1;
  else if (starts_with(label, "C"))
    kind = denominator == 2 ? 2 : 0;
  else if (starts_with(label, "S"))
    kind = denominator == 2 ? 3 : 1;
  return 2 * kind + (is_higher_power(label) ? 1 : 0);
}

// "the mirror plane σv", or with count > 1 "three mirror planes σv".
std::string operation_phrase(const std::string& label, int count = 1) {
  static const char* numbers[] = {"",      "one",   "two",  "three", "four",   "five",  "six",
                                  "seven", "eight", "nine", "ten",   "eleven", "twelve"};
  const std::string amount = count <= 1 ? "the" : count <= 12 ? numbers[count] : std::to_string(count);
  const bool plural = count > 1;
  if (starts_with(label, "σ") || starts_with(label, "sigma"))
    return amount + (plural ? " mirror planes " : " mirror plane ") + label;
  if (starts_with(label, "C")) return amount + (plural ? " rotations " : " rotation ") + label;
  if (starts_with(label, "S")) return amount + (plural ? " rotoreflections " : " rotoreflection ") + label;
  if (label == "i") return "the inversion centre i";
  return amount + (plural ? " operations " : " operation ") + label;
}

// The non-identity operations, grouped by label (mirror planes first, then rotations,
// rotoreflections, the rest), as a short list.
std::string phrase_list(const std::vector<std::string>& labels) {
  std::vector<std::pair<std::string, int>> groups;
  for (const auto& label : labels) {
    auto found = std::find_if(groups.begin(), groups.end(), [&](const auto& g) { return g.first == label; });
    if (found == groups.end())
      groups.emplace_back(label, 1);
    else
      ++found->second;
  }
  auto rank = [](const std::string& label) {
    if (starts_with(label, "σ") || starts_with(label, "sigma")) return 0;
    if (starts_with(label, "C")) return 1;
    if (starts_with(label, "S")) return 2;
    return 3;
  };
  std::stable_sort(groups.begin(), groups.end(),
                   [&](const auto& x, const auto& y) { return rank(x.first) < rank(y.first); });
  constexpr std::size_t shown = 3;
  std::string text;
  for (std::size_t k = 0; k < groups.size() && k < shown; ++k) {
    if (k > 0) text += (k + 1 == std::min(groups.size(), shown) && groups.size() <= shown) ? " and " : ", ";
    text += operation_phrase(groups[k].first, groups[k].second);
  }
  if (groups.size() > shown) text += " and other operations";
  return text;
}

std::string period_fraction(int numerator, int denominator) {
  static const std::map<std::pair<int, int>, std::string> words = {{{1, 2}, "half a period"},
                                                                   {{1, 3}, "a third of a period"},
                                                                   {{2, 3}, "two thirds of a period"},
                                                                   {{1, 4}, "a quarter of a period"},
                                                                   {{3, 4}, "three quarters of a period"},
                                                                   {{1, 5}, "a fifth of a period"},
                                                                   {{1, 6}, "a sixth of a period"},
                                                                   {{1, 8}, "an eighth of a period"}};
  const auto found = words.find({numerator, denominator});
  if (found != words.end()) return found->second;
  return fmt::format("{}/{} of a period", numerator, denominator);
}

std::string describe(const FamilyType& family, const std::vector<std::string>& kept_operations,
                     const PhasedElement* shift, bool whole_group_kept, int block_dimension) {
  std::string text;
  if (family.standing) {
    text = "standing oscillation";
    if (shift != nullptr)
      text += fmt::format(" that {} maps onto itself {} later", operation_phrase(shift->label),
                          period_fraction(shift->numerator, shift->denominator));
  } else {
    text = "rotating motion";
    if (shift != nullptr)
      text += fmt::format(" that {} advances by {}", operation_phrase(shift->label),
                          period_fraction(shift->numerator, shift->denominator));
    text += ", carrying vibrational angular momentum";
  }
  if (block_dimension == 1) {
    // A nondegenerate mode: the kept operations are those of its species; naming them
    // adds nothing.
    if (whole_group_kept) text += " that every symmetry operation keeps";
    return text + " (the one family of a nondegenerate mode)";
  }
  if (whole_group_kept) {
    text += " that every symmetry operation keeps";
  } else if (!kept_operations.empty()) {
    text += (shift != nullptr || !family.standing ? "; it keeps " : " that keeps ") +
            phrase_list(kept_operations);
  }
  return text;
}

// exp(αJ) for an antisymmetric J via the Hermitian matrix iJ = W Λ Wᴴ: exp(αJ) = W e^{−iαΛ} Wᴴ.
struct AxialRotation {
  Eigen::MatrixXcd vectors;
  Eigen::VectorXd values;
  Eigen::MatrixXcd at(double alpha) const {
    Eigen::VectorXcd phases(values.size());
    for (Eigen::Index k = 0; k < values.size(); ++k) phases(k) = std::polar(1.0, -alpha * values(k));
    return vectors * phases.asDiagonal() * vectors.adjoint();
  }
};

// Largest |⟨w, exp(αJ) u⟩| over α (u, w unit): scan then golden-section refinement.
double best_axial_overlap(const AxialRotation& rotation, const Eigen::VectorXcd& u,
                          const Eigen::VectorXcd& w) {
  auto overlap = [&](double alpha) { return std::abs(w.dot(rotation.at(alpha) * u)); };
  constexpr int scan = 720;
  double best = -1.0, best_alpha = 0.0;
  for (int k = 0; k < scan; ++k) {
    const double alpha = 2.0 * units::pi * k / scan;
    const double value = overlap(alpha);
    if (value > best) {
      best = value;
      best_alpha = alpha;
    }
  }
  const double golden = 0.5 * (std::sqrt(5.0) - 1.0);
  double lo = best_alpha - 2.0 * units::pi / scan, hi = best_alpha + 2.0 * units::pi / scan;
  double x1 = hi - golden * (hi - lo), x2 = lo + golden * (hi - lo);
  double f1 = overlap(x1), f2 = overlap(x2);
  for (int iteration = 0; iteration < 60; ++iteration) {
    if (f1 < f2) {
      lo = x1, x1 = x2, f1 = f2, x2 = lo + golden * (hi - lo), f2 = overlap(x2);
    } else {
      hi = x2, x2 = x1, f2 = f1, x1 = hi - golden * (hi - lo), f1 = overlap(x1);
    }
  }
  return std::max({best, f1, f2});
}

struct Candidate {
  FamilyType family;
  Eigen::VectorXcd block_vector;  // v in block coordinates
  std::vector<int> numerators;    // θ per subgroup element, denominator |H|
  int subgroup_index = 0;
};

// Sizes and orthogonality of the matrices; the element labels (given or the group's names).
std::vector<std::string> checked_labels(const CoordinateSymmetry& symmetry) {
  const FiniteGroup& group = symmetry.group;
  const int order = group.order();
  if (order < 1) throw Error("the coordinate symmetry has an empty group");
  if (static_cast<int>(symmetry.matrices.size()) != order)
    throw Error(fmt::format("the coordinate symmetry has {} matrices for a group of order {}",
                            symmetry.matrices.size(), order));
  const Eigen::Index n = symmetry.matrices.front().rows();
  constexpr double orthogonality_tolerance = 1e-6;  // matrices from eigenvectors of numerical Hessians
  for (int g = 0; g < order; ++g) {
    const Eigen::MatrixXd& d = symmetry.matrices[g];
    if (d.rows() != n || d.cols() != n)
      throw Error(fmt::format("symmetry matrix {} is {}x{}, expected {}x{}", g, d.rows(), d.cols(), n, n));
    const double defect = (d.transpose() * d - Eigen::MatrixXd::Identity(n, n)).cwiseAbs().maxCoeff();
    if (defect > orthogonality_tolerance)
      throw Error(fmt::format("symmetry matrix {} is not orthogonal (largest defect {:.3g})", g, defect));
  }
  if (!symmetry.labels.empty() && static_cast<int>(symmetry.labels.size()) != order)
    throw Error(
        fmt::format("the coordinate symmetry has {} labels for {} elements", symmetry.labels.size(), order));
  const bool has_axis = symmetry.axial_generator.size() > 0;
  if (has_axis && (symmetry.axial_generator.rows() != n || symmetry.axial_generator.cols() != n))
    throw Error(fmt::format("the axial generator is {}x{}, expected {}x{}", symmetry.axial_generator.rows(),
                            symmetry.axial_generator.cols(), n, n));
  std::vector<std::string> labels = symmetry.labels;
  if (labels.empty())
    for (int g = 0; g < order; ++g) labels.push_back(group.name(g));
  return labels;
}

// Subgroups up to conjugacy with their one-dimensional characters and normalizers.
struct SubgroupTable {
  std::vector<Subgroup> subgroups;
  std::vector<std::vector<OneDimensionalCharacter>> characters;
  std::vector<std::vector<int>> normalizers;
};

SubgroupTable subgroup_table(const FiniteGroup& group) {
  SubgroupTable table;
  table.subgroups = subgroups_up_to_conjugacy(group);
  for (const Subgroup& subgroup : table.subgroups) {
    table.characters.push_back(one_dimensional_characters(group, subgroup));
    std::vector<int> normalizer;
    const std::set<int> members(subgroup.elements.begin(), subgroup.elements.end());
    for (int g = 0; g < group.order(); ++g) {
      bool normalizes = true;
      for (const int h : subgroup.generators)
        if (!members.count(group.multiply(group.multiply(g, h), group.inverse(g)))) {
          normalizes = false;
          break;
        }
      if (normalizes) normalizer.push_back(g);
    }
    table.normalizers.push_back(std::move(normalizer));
  }
  return table;
}

// Orbit of θ under the normalizer of its subgroup: θ^g(h) = θ(g⁻¹hg).
std::set<std::vector<int>> character_orbit(const FiniteGroup& group, const Subgroup& subgroup,
                                           const std::vector<int>& normalizer,
                                           const OneDimensionalCharacter& theta) {
  const int h_order = static_cast<int>(subgroup.elements.size());
  std::map<int, int> position;
  for (int j = 0; j < h_order; ++j) position[subgroup.elements[j]] = j;
  std::set<std::vector<int>> orbit;
  for (const int g : normalizer) {
    std::vector<int> conjugated(h_order);
    for (int j = 0; j < h_order; ++j) {
      const int h = subgroup.elements[j];
      conjugated[j] =
          theta.phase_numerators[position.at(group.multiply(group.multiply(group.inverse(g), h), g))];
    }
    orbit.insert(conjugated);
  }
  return orbit;
}

// Every twisted isotropy subgroup with a one-dimensional fixed space in one block, one per
// orbit of conjugates (and time-reversed partners), with copies, time reversal and phases.
std::vector<Candidate> block_candidates(const FiniteGroup& group, const SubgroupTable& table,
                                        const BlockAction& action, const ModeBlock& block, int block_index,
                                        const std::vector<std::string>& labels) {
  std::vector<Candidate> candidates;
  for (std::size_t s = 0; s < table.subgroups.size(); ++s) {
    const Subgroup& subgroup = table.subgroups[s];
    const int h_order = static_cast<int>(subgroup.elements.size());
    std::map<int, int> position;
    for (int j = 0; j < h_order; ++j) position[subgroup.elements[j]] = j;
    const std::set<int> members(subgroup.elements.begin(), subgroup.elements.end());
    std::set<std::vector<int>> registered;  // θ (numerators) already covered for this subgroup
    for (const OneDimensionalCharacter& theta : table.characters[s]) {
      if (registered.count(theta.phase_numerators)) continue;
      const double dimension = fixed_dimension(action.characters, subgroup, theta, 1);
      if (rounded_dimension(dimension, fmt::format("modes {}", fmt::join(block.mode_numbers, ","))) != 1)
        continue;
      const Eigen::VectorXcd v = fixed_vector(action, subgroup, theta);
      bool isotropy = true;
      for (int g = 0; g < group.order() && isotropy; ++g)
        if (!members.count(g) && phase_multiple(action.matrices[g].cast<Complex>() * v, v)) isotropy = false;
      if (!isotropy) continue;
      const std::set<std::vector<int>> orbit = character_orbit(group, subgroup, table.normalizers[s], theta);
      const std::vector<int> reversed = negated(theta.phase_numerators, theta.phase_denominator);
      TimeReversal reversal = TimeReversal::separate_partner;
      if (reversed == theta.phase_numerators)
        reversal = TimeReversal::same_family;
      else if (orbit.count(reversed))
        reversal = TimeReversal::among_copies;
      registered.insert(orbit.begin(), orbit.end());
      if (reversal == TimeReversal::separate_partner) {
        // The partner's whole orbit is the negation of this one.
        for (const auto& member : orbit) registered.insert(negated(member, theta.phase_denominator));
      }
      Candidate candidate;
      candidate.block_vector = v;
      candidate.numerators = theta.phase_numerators;
      candidate.subgroup_index = static_cast<int>(s);
      FamilyType& family = candidate.family;
      family.block = block_index;
      family.mode_numbers = block.mode_numbers;
      family.species = block.species;
      family.copies = subgroup.conjugate_count * static_cast<int>(orbit.size());
      family.time_reversal = reversal;
      for (int j = 0; j < h_order; ++j)
        family.subgroup.push_back(
            phased(subgroup.elements[j], theta.phase_numerators[j], theta.phase_denominator, labels));
      for (const int generator : subgroup.generators)
        family.generators.push_back(phased(generator, theta.phase_numerators[position.at(generator)],
                                           theta.phase_denominator, labels));
      candidates.push_back(std::move(candidate));
    }
  }
  return candidates;
}

// A continuous symmetry (a linear molecule's axis) merges families it maps onto each other;
// returns which candidates were merged into an earlier one.
std::vector<bool> merge_axial_copies(const CoordinateSymmetry& symmetry, const BlockAction& action,
                                     std::vector<Candidate>& candidates) {
  std::vector<bool> merged(candidates.size(), false);
  if (symmetry.axial_generator.size() == 0) return merged;
  const Eigen::MatrixXd j_block = action.embedding.transpose() * symmetry.axial_generator * action.embedding;
  Eigen::SelfAdjointEigenSolver<Eigen::MatrixXcd> solver(Complex(0.0, 1.0) * j_block.cast<Complex>());
  AxialRotation axial;
  axial.vectors = solver.eigenvectors();
  axial.values = solver.eigenvalues();
  constexpr double overlap_tolerance = 1e-6;  // |⟨w, e^{αJ}u⟩| = 1 within round-off for equivalent families
  const int order = symmetry.group.order();
  for (std::size_t i = 0; i < candidates.size(); ++i) {
    if (merged[i]) continue;
    const Eigen::VectorXcd& u = candidates[i].block_vector;
    // The rotation moves the family unless J·u is a multiple of u (a rotating orbit
    // about the axis is mapped to itself with a time shift).
    const Eigen::VectorXcd turned = j_block.cast<Complex>() * u;
    if (!phase_multiple(turned, u)) candidates[i].family.continuous_copies = true;
    for (std::size_t k = i + 1; k < candidates.size(); ++k) {
      if (merged[k]) continue;
      for (int g = 0; g < order && !merged[k]; ++g) {
        const Eigen::VectorXcd image = action.matrices[g].cast<Complex>() * candidates[k].block_vector;
        if (best_axial_overlap(axial, u, image) > 1.0 - overlap_tolerance) merged[k] = true;
      }
      if (merged[k]) candidates[i].family.continuous_copies = true;
    }
  }
  return merged;
}

// The seed continue_family needs: the linear orbit (phase aligned so that Re v is the
// major axis, a turning point), Fix(ker θ) in the whole space, the shift element and the
// trajectory checks; and the ellipticity. Returns the kernel ker θ and the shift element.
std::vector<int> seed_family(const CoordinateSymmetry& symmetry, const BlockAction& action,
                             const ModeBlock& block, const Subgroup& subgroup, Candidate& candidate,
                             const PhasedElement*& shift) {
  FamilyType& family = candidate.family;
  const FiniteGroup& group = symmetry.group;
  const int n = static_cast<int>(symmetry.matrices.front().rows());
  const int h_order = static_cast<int>(subgroup.elements.size());
  Eigen::VectorXcd v = action.embedding.cast<Complex>() * candidate.block_vector;
  const Complex square_sum = (v.array() * v.array()).sum();
  v *= std::polar(1.0, -0.5 * std::arg(square_sum));
  const double major = v.real().norm(), minor = v.imag().norm();
  family.ellipticity = major > 0.0 ? minor / major : 0.0;
  constexpr double standing_tolerance = 1e-6;
  family.standing = family.ellipticity < standing_tolerance;
  if (family.standing) v = v.real().cast<Complex>();

  std::vector<int> kernel;
  for (int j = 0; j < h_order; ++j)
    if (candidate.numerators[j] == 0) kernel.push_back(subgroup.elements[j]);
  Eigen::MatrixXd projector = Eigen::MatrixXd::Zero(n, n);
  for (const int k : kernel) projector += symmetry.matrices[k];
  projector /= static_cast<double>(kernel.size());
  Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> fixed(0.5 * (projector + projector.transpose()));
  std::vector<int> columns;
  for (int k = 0; k < n; ++k)
    if (fixed.eigenvalues()(k) > 0.5) columns.push_back(k);
  family.seed.invariant_basis.resize(n, static_cast<Eigen::Index>(columns.size()));
  for (std::size_t k = 0; k < columns.size(); ++k)
    family.seed.invariant_basis.col(static_cast<Eigen::Index>(k)) = fixed.eigenvectors().col(columns[k]);
  const int r = h_order / static_cast<int>(kernel.size());
  family.seed.shift_denominator = r;
  shift = nullptr;
  if (r > 1) {
    for (int j = 0; j < h_order; ++j)
      if (candidate.numerators[j] == static_cast<int>(kernel.size()) &&
          (shift == nullptr ||
           shift_preference(family.subgroup[j].label, r) < shift_preference(shift->label, r))) {
        family.seed.shift_matrix = symmetry.matrices[subgroup.elements[j]];
        shift = &family.subgroup[j];
      }
  }
  // With numerically built matrices (finite-difference Hessians) v lies in Fix(K) only
  // to ~1e-6; the projection makes the seed consistent.
  family.seed.linear_mode = family.seed.invariant_basis.cast<Complex>() *
                            (family.seed.invariant_basis.transpose().cast<Complex>() * v);
  family.seed.angular_frequency = block.angular_frequency;
  family.seed.block_dimension = static_cast<int>(block.coordinates.size());
  for (const PhasedElement& element : family.subgroup) {
    if (element.element == group.identity()) continue;
    TrajectorySymmetry check;
    check.label = element.label;
    check.matrix = symmetry.matrices[element.element];
    check.numerator = element.numerator;
    check.denominator = element.denominator;
    family.seed.checks.push_back(std::move(check));
  }
  return kernel;
}

// Resonance threats: blocks near k·ω, and whether symmetry lets them couple (the twisted
// subgroup with kθ has a fixed space in the partner block).
std::vector<ResonanceThreat> resonance_threats(const std::vector<ModeBlock>& blocks,
                                               const std::vector<BlockAction>& actions, std::size_t b,
                                               const Subgroup& subgroup, const Candidate& candidate,
                                               const UnitConventions& units,
                                               const EnumerationOptions& options) {
  OneDimensionalCharacter theta;
  theta.phase_numerators = candidate.numerators;
  theta.phase_denominator = static_cast<int>(subgroup.elements.size());
  std::vector<ResonanceThreat> threats;
  for (std::size_t other = 0; other < blocks.size(); ++other) {
    if (other == b) continue;
    for (const int k : options.resonance_orders) {
      const double detuning = (blocks[other].angular_frequency - k * blocks[b].angular_frequency) *
                              units.cm1_per_angular_frequency;
      if (std::abs(detuning) > options.resonance_window_cm1) continue;
      ResonanceThreat threat;
      threat.partner_block = static_cast<int>(other);
      threat.partner_mode_numbers = blocks[other].mode_numbers;
      threat.partner_species = blocks[other].species;
      threat.order = k;
      threat.detuning_cm1 = detuning;
      threat.coupling_dimension = rounded_dimension(
          fixed_dimension(actions[other].characters, subgroup, theta, k), "a resonance partner block");
      threat.symmetry_allowed = threat.coupling_dimension > 0;
      threats.push_back(std::move(threat));
    }
  }
  return threats;
}

// The families of one block, larger subgroups first.
std::vector<FamilyType> block_families(const std::vector<ModeBlock>& blocks,
                                       const std::vector<BlockAction>& actions, std::size_t b,
                                       const CoordinateSymmetry& symmetry, const SubgroupTable& table,
                                       const std::vector<std::string>& labels, const UnitConventions& units,
                                       const EnumerationOptions& options) {
  const FiniteGroup& group = symmetry.group;
  std::vector<Candidate> candidates =
      block_candidates(group, table, actions[b], blocks[b], static_cast<int>(b), labels);
  const std::vector<bool> merged = merge_axial_copies(symmetry, actions[b], candidates);
  std::vector<FamilyType> families;
  for (std::size_t i = 0; i < candidates.size(); ++i) {
    if (merged[i]) continue;
    Candidate& candidate = candidates[i];
    const Subgroup& subgroup = table.subgroups[candidate.subgroup_index];
    const PhasedElement* shift = nullptr;
    const std::vector<int> kernel = seed_family(symmetry, actions[b], blocks[b], subgroup, candidate, shift);
    std::vector<std::string> kept;
    for (const int element : kernel)
      if (element != group.identity() && !is_higher_power(labels[element])) kept.push_back(labels[element]);
    const bool whole_group_kept = static_cast<int>(kernel.size()) == group.order() && group.order() > 1;
    FamilyType& family = candidate.family;
    family.description =
        describe(family, kept, shift, whole_group_kept, static_cast<int>(blocks[b].coordinates.size()));
    family.resonance_threats = resonance_threats(blocks, actions, b, subgroup, candidate, units, options);
    families.push_back(std::move(family));
  }
  std::stable_sort(families.begin(), families.end(), [](const FamilyType& x, const FamilyType& y) {
    return x.subgroup.size() > y.subgroup.size();
  });
  return families;
}

}  // namespace

void EnumerationOptions::validate() const {
  using namespace option_checks;
  const char* owner = "enumeration";
  require_non_negative(owner, "resonance_window_cm1", resonance_window_cm1);
  for (const int order : resonance_orders) require_at_least(owner, "resonance_orders", order, 1);
  require_positive(owner, "invariance_tolerance", invariance_tolerance);
}

FamilyEnumeration enumerate_families(const std::vector<ModeBlock>& blocks, const CoordinateSymmetry& symmetry,
                                     const UnitConventions& units, const EnumerationOptions& options) {
  options.validate();
  const std::vector<std::string> labels = checked_labels(symmetry);
  const int n = static_cast<int>(symmetry.matrices.front().rows());
  FamilyEnumeration enumeration;
  enumeration.blocks = blocks;
  std::vector<BlockAction> actions;
  for (const ModeBlock& block : blocks) {
    if (block.coordinates.empty()) throw Error("a mode block has no coordinates");
    actions.push_back(restrict_to_block(block, symmetry, n, options.invariance_tolerance, labels));
  }
  const SubgroupTable table = subgroup_table(symmetry.group);
  for (std::size_t b = 0; b < blocks.size(); ++b) {
    std::vector<FamilyType> families =
        block_families(blocks, actions, b, symmetry, table, labels, units, options);
    if (families.empty())
      enumeration.warnings.push_back(fmt::format(
          "no family is predicted for the {}-fold degenerate modes {}: no twisted isotropy subgroup has a "
          "one-dimensional fixed space (the group given may not describe their symmetry)",
          blocks[b].coordinates.size(), fmt::join(blocks[b].mode_numbers, ",")));
    for (auto& family : families) enumeration.families.push_back(std::move(family));
  }
  return enumeration;
}

}  // namespace overtone
