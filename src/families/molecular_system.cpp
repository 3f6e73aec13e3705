#include "families/molecular_system.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <limits>

#include "core/error.hpp"
#include "core/option_checks.hpp"

namespace overtone {

void MolecularSystemOptions::validate() const {
  using namespace option_checks;
  const char* owner = "molecular system";
  require_positive(owner, "finite_difference_step_angstrom", finite_difference_step_angstrom);
  // Infinity is the default: no barrier known.
  require(escape_energy_cm1 > 0.0, owner, "escape_energy_cm1", "a positive energy or infinity",
          escape_energy_cm1);
}

MolecularVibrationalSystem::MolecularVibrationalSystem(const Potential& potential,
                                                       const HarmonicResult& harmonic,
                                                       const MolecularSystemOptions& options)
    : potential_(potential) {
  options.validate();
  const Eigen::Index cartesian = harmonic.coordinates_angstrom.size();
  if (cartesian != static_cast<Eigen::Index>(3 * potential.atom_count()) ||
      harmonic.masses_da.size() * 3 != cartesian || harmonic.mass_weighted_modes.rows() != cartesian)
    throw Error(fmt::format("harmonic data for {} coordinates do not match a potential for {} atoms",
                            cartesian, potential.atom_count()));
  const Eigen::Index modes = harmonic.mass_weighted_modes.cols();
  if (modes < 1 || harmonic.eigenvalues.size() != modes)
    throw Error(
        fmt::format("harmonic data have {} modes and {} eigenvalues", modes, harmonic.eigenvalues.size()));
  for (Eigen::Index k = 0; k < modes; ++k)
    if (!(harmonic.eigenvalues(k) > 0.0))
      throw Error(
          fmt::format("mode {} has a non-positive force constant (wavenumber {:.2f} cm-1): periodic-orbit "
                      "families need a minimum",
                      k + 1, harmonic.frequencies_cm1(k)));
  escape_energy_ = options.escape_energy_cm1 / molecular_unit_conventions().cm1_per_energy;
  equilibrium_ = harmonic.coordinates_angstrom;
  frequencies_ = harmonic.eigenvalues.cwiseSqrt();
  Eigen::VectorXd inverse_sqrt_mass(cartesian);
  for (Eigen::Index i = 0; i < cartesian; ++i)
    inverse_sqrt_mass(i) = 1.0 / std::sqrt(harmonic.masses_da(i / 3));
  displacement_ = inverse_sqrt_mass.asDiagonal() * harmonic.mass_weighted_modes;
  linear_ = harmonic.linear;
  if (linear_) axial_generator_ = axial_rotation_generator(harmonic);
  const bool has_hessian = potential.has_analytic_hessian();
  const bool has_products = potential.has_analytic_hessian_vector_product();
  if (options.hessian_products == HessianProducts::analytic && !has_hessian && !has_products)
    throw Error("analytic Hessian products were requested but the potential '" + potential.description() +
                "' has neither an analytic Hessian nor analytic Hessian-vector products");
  // A unit normal coordinate moves no atom by more than 1/sqrt(smallest mass) Å.
  step_ = options.finite_difference_step_angstrom * std::sqrt(harmonic.masses_da.minCoeff());
  Eigen::VectorXd cartesian_gradient;
  reference_energy_ = potential.energy_and_gradient(equilibrium_, cartesian_gradient);
  residual_gradient_ = displacement_.transpose() * cartesian_gradient;

  // The cost of each way, as hessian_times() pays it (projections included); the best of a
  // few repetitions damps timer noise. With only one way allowed nothing is measured.
  const bool differences_allowed = options.hessian_products != HessianProducts::analytic;
  const bool hessian_allowed = has_hessian && options.hessian_products != HessianProducts::finite_differences;
  const bool products_allowed =
      has_products && options.hessian_products != HessianProducts::finite_differences;
  const int ways = (differences_allowed ? 1 : 0) + (hessian_allowed ? 1 : 0) + (products_allowed ? 1 : 0);
  auto best_time = [](const auto& call) {
    using clock = std::chrono::steady_clock;
    double best = std::numeric_limits<double>::infinity();
    for (int repeat = 0; repeat < 3; ++repeat) {
      const auto started = clock::now();
      call();
      best = std::min(best, std::chrono::duration<double>(clock::now() - started).count());
    }
    return best;
  };
  const Eigen::VectorXd origin = Eigen::VectorXd::Zero(static_cast<Eigen::Index>(modes));
  const Eigen::MatrixXd one_direction = Eigen::MatrixXd::Identity(static_cast<Eigen::Index>(modes), 1);
  Eigen::MatrixXd scratch;
  if (differences_allowed)
    difference_seconds_per_direction_ =
        ways == 1 ? 0.0 : best_time([&] { difference_products(origin, one_direction, scratch); });
  if (hessian_allowed)
    hessian_seconds_ = ways == 1 ? 0.0 : best_time([&] { hessian_products(origin, one_direction, scratch); });
  if (products_allowed)
    product_seconds_per_direction_ =
        ways == 1 ? 0.0 : best_time([&] { analytic_products(origin, one_direction, scratch); });
}

MolecularVibrationalSystem::Way MolecularVibrationalSystem::way_for(Eigen::Index directions) const {
  const double k = static_cast<double>(directions);
  const double differences = k * difference_seconds_per_direction_;
  const double products = k * product_seconds_per_direction_;
  if (hessian_seconds_ <= differences && hessian_seconds_ <= products) return Way::hessian;
  return products <= differences ? Way::products : Way::differences;
}

std::string MolecularVibrationalSystem::hessian_method() const {
  std::vector<std::string> parts;
  const char* names[] = {"finite differences of gradients", "analytic Hessian-vector products",
                         "the analytic Hessian"};
  Way previous = way_for(1);
  int from = 1;
  const int n = dimension();
  for (int k = 2; k <= n + 1; ++k) {
    const Way way = k <= n ? way_for(k) : previous;
    if (k <= n && way == previous) continue;
    const int to = k - 1;
    parts.push_back(from == 1 && to == n
                        ? names[static_cast<int>(previous)]
                        : fmt::format("{} for {}{} directions", names[static_cast<int>(previous)],
                                      from == to ? "" : fmt::format("{} to ", from), to));
    previous = way;
    from = k;
  }
  return fmt::format("{}", fmt::join(parts, ", "));
}

std::string MolecularVibrationalSystem::description() const {
  return "normal coordinates on " + potential_.description();
}

Eigen::VectorXd MolecularVibrationalSystem::cartesian_displacement_angstrom(const Eigen::VectorXd& q) const {
  return displacement_ * q;
}

double MolecularVibrationalSystem::compute_potential(const Eigen::VectorXd& q) const {
  return potential_.energy(equilibrium_ + displacement_ * q) - reference_energy_ - residual_gradient_.dot(q);
}

void MolecularVibrationalSystem::compute_gradient(const Eigen::VectorXd& q, Eigen::VectorXd& g) const {
  thread_local Eigen::VectorXd cartesian_gradient;  // no allocation per call, safe across threads
  potential_.energy_and_gradient(equilibrium_ + displacement_ * q, cartesian_gradient);
  g.noalias() = displacement_.transpose() * cartesian_gradient;
  g -= residual_gradient_;
}

void MolecularVibrationalSystem::difference_products(const Eigen::VectorXd& q,
                                                     const Eigen::MatrixXd& directions,
                                                     Eigen::MatrixXd& out) const {
  VibrationalSystem::compute_hessian_times(q, directions, out);
}

void MolecularVibrationalSystem::hessian_products(const Eigen::VectorXd& q, const Eigen::MatrixXd& directions,
                                                  Eigen::MatrixXd& out) const {
  const Eigen::MatrixXd hessian = potential_.hessian(equilibrium_ + displacement_ * q);
  count_hessians(1);
  out.noalias() = displacement_.transpose() * (hessian * (displacement_ * directions));
}

void MolecularVibrationalSystem::analytic_products(const Eigen::VectorXd& q,
                                                   const Eigen::MatrixXd& directions,
                                                   Eigen::MatrixXd& out) const {
  const Eigen::VectorXd x = equilibrium_ + displacement_ * q;
  const Eigen::MatrixXd cartesian = displacement_ * directions;
  out.resize(dimension(), directions.cols());
  for (Eigen::Index k = 0; k < directions.cols(); ++k)
    out.col(k).noalias() = displacement_.transpose() * potential_.hessian_vector_product(x, cartesian.col(k));
  count_hessian_vector_products(static_cast<std::size_t>(directions.cols()));
}

void MolecularVibrationalSystem::compute_hessian_times(const Eigen::VectorXd& q,
                                                       const Eigen::MatrixXd& directions,
                                                       Eigen::MatrixXd& out) const {
  switch (way_for(directions.cols())) {
    case Way::differences:
      difference_products(q, directions, out);
      return;
    case Way::products:
      analytic_products(q, directions, out);
      return;
    case Way::hessian:
      hessian_products(q, directions, out);
      return;
  }
}

namespace {

Eigen::MatrixXd nearest_orthogonal(const Eigen::MatrixXd& m) {
  Eigen::JacobiSVD<Eigen::MatrixXd> svd(m, Eigen::ComputeFullU | Eigen::ComputeFullV);
  return svd.matrixU() * svd.matrixV().transpose();
}

}  // namespace

CoordinateSymmetry molecular_coordinate_symmetry(const PointGroupResult& group, const ModeSymmetry& symmetry,
                                                 const HarmonicResult& harmonic) {
  const auto n = static_cast<Eigen::Index>(harmonic.mode_count());
  if (symmetry.mode_count() != harmonic.mode_count() ||
      static_cast<int>(symmetry.order()) != group.group.order())
    throw Error(fmt::format(
        "a mode symmetry of order {} on {} modes does not match {} on harmonic data with {} modes",
        symmetry.order(), symmetry.mode_count(), group.group.name, n));
  CoordinateSymmetry coordinates;
  coordinates.group = group.group.finite_group();
  // Optimized geometries are symmetric to ~1e-6 Å; a larger defect means the group does
  // not describe the harmonic geometry.
  constexpr double orthogonality_limit = 1e-3;
  for (int g = 0; g < group.group.order(); ++g) {
    const Eigen::MatrixXd& d = symmetry.operations()[static_cast<std::size_t>(g)];
    const double defect = (d.transpose() * d - Eigen::MatrixXd::Identity(n, n)).cwiseAbs().maxCoeff();
    if (defect > orthogonality_limit)
      throw Error(fmt::format(
          "operation {} does not map the vibrational coordinates onto themselves (defect {:.3g}); "
          "the harmonic geometry does not have the symmetry of {}",
          group.group.operations[g].name, defect, group.group.name));
    coordinates.matrices.push_back(nearest_orthogonal(d));
    coordinates.labels.push_back(group.group.operations[g].name);
  }
  if (harmonic.linear) coordinates.axial_generator = axial_rotation_generator(harmonic);
  return coordinates;
}

Eigen::MatrixXd axial_rotation_generator(const HarmonicResult& harmonic) {
  const Eigen::MatrixXd& modes = harmonic.mass_weighted_modes;
  // The molecular axis: the direction of largest spread of the atoms.
  const Eigen::Index atoms = harmonic.coordinates_angstrom.size() / 3;
  Eigen::MatrixXd positions(atoms, 3);
  for (Eigen::Index a = 0; a < atoms; ++a) positions.row(a) = harmonic.coordinates_angstrom.segment<3>(3 * a);
  const Eigen::MatrixXd centred = positions.rowwise() - positions.colwise().mean();
  Eigen::JacobiSVD<Eigen::MatrixXd> svd(centred, Eigen::ComputeFullV);
  const Eigen::Vector3d axis = svd.matrixV().col(0);
  Eigen::Matrix3d cross;
  cross << 0.0, -axis.z(), axis.y(), axis.z(), 0.0, -axis.x(), -axis.y(), axis.x(), 0.0;
  Eigen::MatrixXd turned(modes.rows(), modes.cols());
  for (Eigen::Index a = 0; a < atoms; ++a) turned.middleRows(3 * a, 3) = cross * modes.middleRows(3 * a, 3);
  const Eigen::MatrixXd j = modes.transpose() * turned;
  return 0.5 * (j - j.transpose());
}

std::vector<Eigen::MatrixXd> MolecularVibrationalSystem::symmetry_generators() const {
  if (!linear_) return {};
  return {axial_generator_};
}

std::vector<ModeBlock> molecular_mode_blocks(const ModeSymmetry& symmetry, const HarmonicResult& harmonic,
                                             const std::vector<int>& mode_order) {
  const int n = static_cast<int>(harmonic.mode_count());
  std::vector<int> number(static_cast<std::size_t>(n));
  for (int k = 0; k < n; ++k) number[k] = k + 1;
  if (!mode_order.empty()) {
    if (static_cast<int>(mode_order.size()) != n)
      throw Error(fmt::format("mode order has {} entries for {} modes", mode_order.size(), n));
    for (int k = 0; k < n; ++k) {
      if (mode_order[k] < 0 || mode_order[k] >= n)
        throw Error(fmt::format("mode order entry {} is outside 0..{}", mode_order[k], n - 1));
      number[mode_order[k]] = k + 1;
    }
  }
  return mode_blocks(symmetry, harmonic.eigenvalues.cwiseMax(0.0).cwiseSqrt(), number);
}

}  // namespace overtone
