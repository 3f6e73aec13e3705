#include "families/molecular_system.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <limits>

#include "core/error.hpp"

namespace overtone {

MolecularVibrationalSystem::MolecularVibrationalSystem(const Potential& potential,
                                                       const HarmonicResult& harmonic,
                                                       const MolecularSystemOptions& options)
    : potential_(potential) {
  const Eigen::Index cartesian = harmonic.coordinates_angstrom.size();
  if (cartesian != static_cast<Eigen::Index>(3 * potential.atom_count()) ||
      harmonic.masses_da.size() * 3 != cartesian || harmonic.mass_weighted_modes.rows() != cartesian)
    throw Error(fmt::format("harmonic data for {} coordinates do not match a potential for {} atoms",
                            cartesian, potential.atom_count()));
  const Eigen::Index modes = harmonic.mass_weighted_modes.cols();
  if (modes < 1 || harmonic.eigenvalues.size() != modes)
    throw Error(
        fmt::format("harmonic data have {} modes and {} eigenvalues", modes, harmonic.eigenvalues.size()));
  if (!(options.finite_difference_step_angstrom > 0.0))
    throw Error(fmt::format("finite_difference_step_angstrom must be positive, got {}",
                            options.finite_difference_step_angstrom));
  for (Eigen::Index k = 0; k < modes; ++k)
    if (!(harmonic.eigenvalues(k) > 0.0))
      throw Error(
          fmt::format("mode {} has a non-positive force constant (wavenumber {:.2f} cm-1): periodic-orbit "
                      "families need a minimum",
                      k + 1, harmonic.frequencies_cm1(k)));
  if (!(options.escape_energy_cm1 > 0.0))
    throw Error(fmt::format("escape_energy_cm1 must be positive, got {}", options.escape_energy_cm1));
  escape_energy_ = options.escape_energy_cm1 / molecular_unit_conventions().cm1_per_energy;
  equilibrium_ = harmonic.coordinates_angstrom;
  frequencies_ = harmonic.eigenvalues.cwiseSqrt();
  Eigen::VectorXd inverse_sqrt_mass(cartesian);
  for (Eigen::Index i = 0; i < cartesian; ++i)
    inverse_sqrt_mass(i) = 1.0 / std::sqrt(harmonic.masses_da(i / 3));
  displacement_ = inverse_sqrt_mass.asDiagonal() * harmonic.mass_weighted_modes;
  linear_ = harmonic.linear;
  if (linear_) axial_generator_ = axial_rotation_generator(harmonic);
  analytic_available_ = potential.has_analytic_hessian();
  if (options.hessian_products == HessianProducts::analytic && !analytic_available_)
    throw Error("analytic Hessian products were requested but the potential '" + potential.description() +
                "' has none");
  // A unit normal coordinate moves no atom by more than 1/sqrt(smallest mass) Å.
  step_ = options.finite_difference_step_angstrom * std::sqrt(harmonic.masses_da.minCoeff());
  reference_energy_ = potential.energy_and_gradient(equilibrium_, cartesian_gradient_);
  residual_gradient_ = displacement_.transpose() * cartesian_gradient_;
  const int n = static_cast<int>(modes);
  if (!analytic_available_ || options.hessian_products == HessianProducts::finite_differences) {
    analytic_threshold_ = n + 1;  // never
  } else if (options.hessian_products == HessianProducts::analytic) {
    analytic_threshold_ = 0;  // always
  } else {
    // One Hessian against 2k gradients; the best of a few repetitions damps timer noise.
    using clock = std::chrono::steady_clock;
    double gradient_seconds = std::numeric_limits<double>::infinity();
    double hessian_seconds = std::numeric_limits<double>::infinity();
    Eigen::VectorXd scratch;
    for (int repeat = 0; repeat < 3; ++repeat) {
      auto started = clock::now();
      for (int k = 0; k < 4; ++k) potential.energy_and_gradient(equilibrium_, scratch);
      gradient_seconds =
          std::min(gradient_seconds, std::chrono::duration<double>(clock::now() - started).count() / 4);
      started = clock::now();
      potential.hessian(equilibrium_);
      hessian_seconds =
          std::min(hessian_seconds, std::chrono::duration<double>(clock::now() - started).count());
    }
    const double ratio = hessian_seconds / std::max(gradient_seconds, 1e-12);
    analytic_threshold_ = std::min(n + 1, static_cast<int>(std::ceil(0.5 * ratio)));
  }
}

std::string MolecularVibrationalSystem::hessian_method() const {
  if (analytic_threshold_ == 0) return "analytic";
  if (analytic_threshold_ > dimension()) return "finite differences";
  return fmt::format("analytic for {} or more directions, else finite differences", analytic_threshold_);
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
  potential_.energy_and_gradient(equilibrium_ + displacement_ * q, cartesian_gradient_);
  g.noalias() = displacement_.transpose() * cartesian_gradient_;
  g -= residual_gradient_;
}

void MolecularVibrationalSystem::compute_hessian_times(const Eigen::VectorXd& q,
                                                       const Eigen::MatrixXd& directions,
                                                       Eigen::MatrixXd& out) const {
  const int k = static_cast<int>(std::min<Eigen::Index>(directions.cols(), dimension()));
  if (k < analytic_threshold_) {
    VibrationalSystem::compute_hessian_times(q, directions, out);
    return;
  }
  const Eigen::MatrixXd hessian = potential_.hessian(equilibrium_ + displacement_ * q);
  out.noalias() = displacement_.transpose() * (hessian * (displacement_ * directions));
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
