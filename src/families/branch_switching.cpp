#include "families/branch_switching.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <set>

#include "core/error.hpp"
#include "core/option_checks.hpp"
#include "core/units.hpp"

namespace overtone {

void BranchSwitchingOptions::validate() const {
  using namespace option_checks;
  const char* owner = "branch switching";
  require_at_least(owner, "depth", depth, 0);
  require_in_open(owner, "energy_resolution", energy_resolution, 0.0, 1.0);
  require_positive(owner, "test_tolerance", test_tolerance);
  require_at_least(owner, "max_probes", max_probes, 2);
  require_in_open(owner, "kernel_tolerance", kernel_tolerance, 0.0, 1.0);
  require_in_open(owner, "first_step", first_step, 0.0, 1.0);
  require_at_least(owner, "max_births_per_family", max_births_per_family, 0);
}

double bifurcation_test_value(const OrbitPoint& point, FamilyEventKind kind) {
  const double target = kind == FamilyEventKind::period_doubling ? -1.0 : 1.0;
  const auto& multipliers = point.nonneutral_multipliers;
  if (multipliers.empty()) return std::numeric_limits<double>::quiet_NaN();
  const auto nearest = std::min_element(
      multipliers.begin(), multipliers.end(),
      [&](const auto& x, const auto& y) { return std::abs(x - target) < std::abs(y - target); });
  // μ + 1/μ is 2cos α on the unit circle and real beyond it: ±2 exactly at the crossing.
  return (*nearest + 1.0 / *nearest).real() - 2.0 * target;
}

std::optional<BirthSite> locate_bifurcation(const VibrationalSystem& system, const FamilySeed& parent_seed,
                                            const ContinuationOptions& continuation,
                                            const ContinuationResult& backbone, const FamilyEvent& event,
                                            const BranchSwitchingOptions& options, std::string& failure) {
  options.validate();
  const auto& points = backbone.points;
  if (event.point_index < 1 || event.point_index >= static_cast<int>(points.size())) {
    failure = "the event lies outside the backbone";
    return std::nullopt;
  }
  OrbitPoint low = points[static_cast<std::size_t>(event.point_index - 1)];
  OrbitPoint high = points[static_cast<std::size_t>(event.point_index)];
  double tau_low = bifurcation_test_value(low, event.kind),
         tau_high = bifurcation_test_value(high, event.kind);
  if (!(tau_low * tau_high < 0.0) || low.energy_direction != high.energy_direction) {
    failure = "the test function does not change sign between the backbone points around the event";
    return std::nullopt;
  }
  ContinuationOptions probe_options = continuation;
  probe_options.compute_floquet = true;
  const double resolution = options.energy_resolution * std::abs(high.energy - low.energy);
  BirthSite site;
  site.kind = event.kind;
  int stale_side = 0;  // Illinois: halve the value of a bracket end kept twice in a row
  double weight_low = 1.0, weight_high = 1.0;
  while (site.probes < options.max_probes) {
    double energy = (low.energy * weight_high * tau_high - high.energy * weight_low * tau_low) /
                    (weight_high * tau_high - weight_low * tau_low);
    if (!(energy > std::min(low.energy, high.energy) && energy < std::max(low.energy, high.energy)))
      energy = 0.5 * (low.energy + high.energy);
    const OrbitPoint& near = std::abs(energy - low.energy) < std::abs(energy - high.energy) ? low : high;
    OrbitProbe probe = solve_orbit_at_energy(system, parent_seed, probe_options, near, energy);
    ++site.probes;
    if (!probe.converged || probe.monodromy.size() == 0) {
      // Very close to the bifurcation Newton's fresh Jacobians err by about the closure
      // tolerance; the best orbit so far is then the answer.
      if (site.monodromy.size() > 0) break;
      failure = "an orbit near the bifurcation did not converge: " + probe.failure;
      return std::nullopt;
    }
    const double tau = bifurcation_test_value(probe.point, event.kind);
    if (site.monodromy.size() == 0 || std::abs(tau) < std::abs(site.test_value)) {
      site.point = probe.point;
      site.monodromy = probe.monodromy;
      site.test_value = tau;
    }
    if (std::abs(tau) < options.test_tolerance) break;
    if ((tau < 0.0) == (tau_low < 0.0)) {
      low = probe.point;
      tau_low = tau;
      weight_low = 1.0;
      weight_high = stale_side == 1 ? 0.5 * weight_high : 1.0;
      stale_side = 1;
    } else {
      high = probe.point;
      tau_high = tau;
      weight_high = 1.0;
      weight_low = stale_side == -1 ? 0.5 * weight_low : 1.0;
      stale_side = -1;
    }
    if (std::abs(high.energy - low.energy) < resolution) break;
  }
  return site;
}

namespace {

// Phase-space action of an operation on (Q, P) and its scaled twin.
Eigen::MatrixXd phase_space(const Eigen::MatrixXd& d) {
  const Eigen::Index n = d.rows();
  Eigen::MatrixXd out = Eigen::MatrixXd::Zero(2 * n, 2 * n);
  out.topLeftCorner(n, n) = d;
  out.bottomRightCorner(n, n) = d;
  return out;
}

// Orthonormal basis of the (numerical) kernel of a square matrix.
Eigen::MatrixXd kernel_of(const Eigen::MatrixXd& a, double tolerance) {
  if (a.size() == 0) return {};
  const Eigen::JacobiSVD<Eigen::MatrixXd> svd(a, Eigen::ComputeFullV);
  const Eigen::VectorXd& values = svd.singularValues();
  int count = 0;
  for (Eigen::Index k = 0; k < values.size(); ++k)
    if (values(k) <= tolerance * std::max(values(0), 1.0)) ++count;
  return svd.matrixV().rightCols(count);
}

// The part of span(columns) that `projector` keeps entirely (the subspace is invariant
// under the operation, so the projector's singular values there are 1 or 0).
Eigen::MatrixXd kept_part(const Eigen::MatrixXd& projector, const Eigen::MatrixXd& columns) {
  const Eigen::JacobiSVD<Eigen::MatrixXd> svd(projector * columns, Eigen::ComputeThinU);
  int count = 0;
  constexpr double half = 0.5;  // between the singular values 0 and 1
  for (Eigen::Index k = 0; k < svd.singularValues().size(); ++k)
    if (svd.singularValues()(k) > half) ++count;
  return svd.matrixU().leftCols(count);
}

// A kernel of several dimensions cut down to one by the symmetry: the vectors an
// operation keeps first, then those it reverses (the largest isotropy first).
Eigen::VectorXd symmetric_kernel_vector(Eigen::MatrixXd kernel,
                                        const std::vector<Eigen::MatrixXd>& operations) {
  const Eigen::Index size = kernel.rows();
  const Eigen::MatrixXd identity = Eigen::MatrixXd::Identity(size, size);
  for (const double sign : {1.0, -1.0})
    for (const Eigen::MatrixXd& op : operations) {
      if (kernel.cols() <= 1) break;
      const Eigen::MatrixXd part = kept_part(0.5 * (identity + sign * op), kernel);
      if (part.cols() > 0 && part.cols() < kernel.cols()) kernel = part;
    }
  return kernel.col(0);
}

// The scaled monodromy's kernel direction at the site (phase space, scaled momenta).
// Branch points: only in the space an operation of the parent reverses (the +1 of the
// flow and of the energy lie in the space every such operation keeps).
Eigen::VectorXd branch_direction(const BirthSite& site, const Eigen::MatrixXd& scaled_monodromy,
                                 const std::vector<Eigen::MatrixXd>& stabilizer, double tolerance) {
  const Eigen::Index size = scaled_monodromy.rows();
  const Eigen::MatrixXd identity = Eigen::MatrixXd::Identity(size, size);
  if (site.kind == FamilyEventKind::period_doubling) {
    const Eigen::MatrixXd kernel = kernel_of(scaled_monodromy + identity, tolerance);
    if (kernel.cols() == 0) return {};
    return symmetric_kernel_vector(kernel, stabilizer);
  }
  for (const Eigen::MatrixXd& op : stabilizer) {
    const Eigen::MatrixXd reversed = kept_part(0.5 * (identity - op), identity);
    if (reversed.cols() == 0) continue;
    const Eigen::MatrixXd restricted = reversed.transpose() * (scaled_monodromy - identity) * reversed;
    const Eigen::MatrixXd kernel = kernel_of(restricted, tolerance);
    if (kernel.cols() > 0) return symmetric_kernel_vector(reversed * kernel, stabilizer);
  }
  return {};
}

// Orthonormal basis of the coordinates every listed operation fixes.
Eigen::MatrixXd fixed_coordinates(const std::vector<const Eigen::MatrixXd*>& operations, Eigen::Index n) {
  if (operations.empty()) return Eigen::MatrixXd::Identity(n, n);
  Eigen::MatrixXd stacked(n * static_cast<Eigen::Index>(operations.size()), n);
  for (std::size_t k = 0; k < operations.size(); ++k)
    stacked.middleRows(static_cast<Eigen::Index>(k) * n, n) =
        *operations[k] - Eigen::MatrixXd::Identity(n, n);
  constexpr double fixed_tolerance = 1e-8;  // exact representation matrices: 0 or O(1)
  return kernel_of(stacked.transpose() * stacked, fixed_tolerance);
}

}  // namespace

namespace {

struct BornSymmetry {
  std::vector<PhasedElement> subgroup;  // kept (phase 0) and, for a doubling, reversed (1/2)
  std::vector<int> broken;              // operations of the parent's orbit it does not keep
  int stabilizer_order = 0;             // operations fixing the parent's orbit
};

bool is_identity(const CoordinateSymmetry& symmetry, int element) {
  return element == symmetry.group.identity();
}

std::string label_of(const CoordinateSymmetry& symmetry, int element) {
  return symmetry.labels.empty() ? symmetry.group.name(element)
                                 : symmetry.labels[static_cast<std::size_t>(element)];
}

// How the operations that fix the parent's state act on the branch direction v.
BornSymmetry classify_operations(const CoordinateSymmetry& symmetry, const Eigen::VectorXd& state,
                                 const Eigen::VectorXd& direction, bool doubling) {
  constexpr double tolerance = 1e-6;  // relative; converged orbits are symmetric to ~1e-9
  BornSymmetry result;
  for (int g = 0; g < symmetry.group.order(); ++g) {
    const Eigen::MatrixXd op = phase_space(symmetry.matrices[static_cast<std::size_t>(g)]);
    if ((op * state - state).norm() > tolerance * state.norm()) continue;
    ++result.stabilizer_order;
    PhasedElement element;
    element.element = g;
    element.label = label_of(symmetry, g);
    if ((op * direction - direction).norm() <= tolerance * direction.norm()) {
      result.subgroup.push_back(element);
    } else if (doubling && (op * direction + direction).norm() <= tolerance * direction.norm()) {
      element.numerator = 1;
      element.denominator = 2;
      result.subgroup.push_back(element);
    } else {
      result.broken.push_back(g);
    }
  }
  return result;
}

// The parent's modes and those the branch direction moves (more than a percent of it).
std::vector<int> involved_modes(const FamilyType& parent, const std::vector<ModeBlock>& blocks,
                                const Eigen::VectorXd& scaled_direction) {
  const Eigen::Index n = scaled_direction.size() / 2;
  std::set<int> modes(parent.mode_numbers.begin(), parent.mode_numbers.end());
  constexpr double share = 0.01;
  const double total = scaled_direction.squaredNorm();
  for (const ModeBlock& block : blocks)
    for (std::size_t j = 0; j < block.coordinates.size(); ++j) {
      const Eigen::Index c = block.coordinates[j];
      if (c >= n) continue;
      const double weight =
          scaled_direction(c) * scaled_direction(c) + scaled_direction(n + c) * scaled_direction(n + c);
      if (weight > share * total)
        modes.insert(j < block.mode_numbers.size() ? block.mode_numbers[j] : int(c) + 1);
    }
  return {modes.begin(), modes.end()};
}

std::string labels_text(const std::vector<std::string>& labels) {
  std::vector<std::string> distinct;
  for (const auto& label : labels)
    if (std::find(distinct.begin(), distinct.end(), label) == distinct.end()) distinct.push_back(label);
  return distinct.empty() ? std::string("none") : fmt::format("{}", fmt::join(distinct, ", "));
}

std::string born_description(const FamilyType& type, const BornSymmetry& born,
                             const CoordinateSymmetry& symmetry, int parent_number, const BirthSite& site,
                             const UnitConventions& units) {
  std::vector<std::string> kept, later, broken;
  for (const PhasedElement& element : born.subgroup)
    if (!is_identity(symmetry, element.element))
      (element.numerator == 0 ? kept : later).push_back(element.label);
  for (const int g : born.broken) broken.push_back(label_of(symmetry, g));
  const bool doubling = site.kind == FamilyEventKind::period_doubling;
  std::string text = fmt::format("oscillation born from family {} at {:.6g} {} {}: modes {} together{}",
                                 parent_number, site.point.energy * units.cm1_per_energy, units.energy_label,
                                 doubling ? "where it period-doubles" : "at a branch point",
                                 fmt::join(type.mode_numbers, ","),
                                 doubling ? ", the new modes at half the parent's frequency" : "");
  text += "; keeps " + labels_text(kept);
  if (!later.empty()) text += "; mapped onto itself half a period later by " + labels_text(later);
  if (!broken.empty()) text += "; breaks " + labels_text(broken);
  return text;
}

}  // namespace

std::optional<FamilyType> born_family_type(const FamilyType& parent, int parent_number,
                                           const std::vector<ModeBlock>& blocks,
                                           const CoordinateSymmetry& symmetry, const BirthSite& site,
                                           const UnitConventions& units,
                                           const BranchSwitchingOptions& options, std::string& failure) {
  options.validate();
  const OrbitPoint& point = site.point;
  const Eigen::Index n = point.initial_positions.size();
  const double omega = point.angular_frequency;
  // Scaled phase space (Q, P/ω): the monodromy's blocks are of one size there.
  Eigen::VectorXd to_scaled = Eigen::VectorXd::Ones(2 * n);
  to_scaled.tail(n).setConstant(1.0 / omega);
  const Eigen::MatrixXd scaled =
      to_scaled.asDiagonal() * site.monodromy * to_scaled.cwiseInverse().asDiagonal();
  Eigen::VectorXd state(2 * n);
  state << point.initial_positions, point.initial_momenta / omega;
  std::vector<Eigen::MatrixXd> stabilizer;
  constexpr double tolerance = 1e-6;  // as in classify_operations
  for (const Eigen::MatrixXd& d : symmetry.matrices) {
    const Eigen::MatrixXd op = phase_space(d);
    if ((op * state - state).norm() <= tolerance * state.norm()) stabilizer.push_back(op);
  }
  const Eigen::VectorXd scaled_direction =
      branch_direction(site, scaled, stabilizer, options.kernel_tolerance);
  if (scaled_direction.size() == 0) {
    failure = site.kind == FamilyEventKind::branch_point
                  ? "no symmetry of the parent is broken at this multiplier +1 (a fold of families, no birth)"
                  : "the monodromy has no kernel at -1 there";
    return std::nullopt;
  }
  const bool doubling = site.kind == FamilyEventKind::period_doubling;
  const BornSymmetry born = classify_operations(symmetry, state, scaled_direction, doubling);
  FamilyType type;
  type.block = parent.block;
  type.mode_numbers = involved_modes(parent, blocks, scaled_direction);
  type.subgroup = born.subgroup;
  for (const PhasedElement& element : born.subgroup)
    if (!is_identity(symmetry, element.element)) type.generators.push_back(element);
  type.copies = std::max(1, parent.copies * born.stabilizer_order / std::max<int>(1, born.subgroup.size()));
  const Eigen::VectorXd direction_q = scaled_direction.head(n);
  type.continuous_copies = parent.continuous_copies || (symmetry.axial_generator.size() > 0 &&
                                                        (symmetry.axial_generator * direction_q).norm() >
                                                            tolerance * std::max(direction_q.norm(), 1e-300));
  // The parent's time reverse gives birth to the reverse of this family.
  type.time_reversal = parent.time_reversal;
  type.standing = parent.standing;
  type.description = born_description(type, born, symmetry, parent_number, site, units);

  FamilySeed& seed = type.seed;
  const double period = doubling ? 2.0 * point.period : point.period;
  seed.angular_frequency = 2.0 * units::pi / period;
  std::vector<const Eigen::MatrixXd*> kept;
  for (const PhasedElement& element : born.subgroup) {
    const Eigen::MatrixXd& d = symmetry.matrices[static_cast<std::size_t>(element.element)];
    if (element.numerator == 0) {
      kept.push_back(&d);
    } else if (seed.shift_matrix.size() == 0) {
      seed.shift_matrix = d;
      seed.shift_denominator = 2;
    }
    if (!is_identity(symmetry, element.element))
      seed.checks.push_back({element.label, d, element.numerator, element.denominator});
  }
  seed.invariant_basis = fixed_coordinates(kept, n);
  Eigen::VectorXd direction(2 * n);
  direction << direction_q, scaled_direction.tail(n) * omega;
  seed.linear_mode = direction_q.cast<std::complex<double>>() -
                     std::complex<double>(0.0, 1.0) *
                         (direction.tail(n) / seed.angular_frequency).cast<std::complex<double>>();
  BranchStart start;
  start.positions = point.initial_positions;
  start.momenta = point.initial_momenta;
  start.period = period;
  start.energy = point.energy;
  start.direction = direction;
  start.step = options.first_step;
  seed.branch = start;
  return type;
}

}  // namespace overtone
