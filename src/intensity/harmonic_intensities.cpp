#include "intensity/harmonic_intensities.hpp"

#include <fmt/format.h>

#include <cmath>
#include <limits>
#include <map>

#include "core/error.hpp"
#include "core/units.hpp"
#include "harmonic/inertia.hpp"

namespace overtone {

namespace {

// Principal moments below this fraction of the largest are the axis of a linear molecule
// (the harmonic stage's linearity test uses 1e-8 of the largest moment as well).
constexpr double vanishing_moment_fraction = 1e-8;

// Cartesian displacement of each mode per unit normal coordinate: M^{-1/2} L (3N × M).
Eigen::MatrixXd cartesian_per_normal_coordinate(const HarmonicResult& harmonic) {
  Eigen::MatrixXd displacement = harmonic.mass_weighted_modes;
  for (Eigen::Index a = 0; a < harmonic.masses_da.size(); ++a)
    displacement.middleRows(3 * a, 3) /= std::sqrt(harmonic.masses_da[a]);
  return displacement;
}

// Groups of harmonic indices that share a set id.
std::vector<std::vector<Eigen::Index>> mode_groups(const std::vector<int>& set_of_mode, Eigen::Index modes) {
  std::map<int, std::vector<Eigen::Index>> by_set;
  for (Eigen::Index k = 0; k < modes; ++k)
    by_set[set_of_mode.empty() ? static_cast<int>(k) : set_of_mode[static_cast<std::size_t>(k)]].push_back(k);
  std::vector<std::vector<Eigen::Index>> groups;
  for (auto& entry : by_set) groups.push_back(std::move(entry.second));
  return groups;
}

// Replaces each value by the mean over its group.
void average_over_sets(Eigen::VectorXd& values, const std::vector<std::vector<Eigen::Index>>& groups) {
  for (const auto& group : groups) {
    double sum = 0.0;
    for (const Eigen::Index k : group) sum += values[k];
    for (const Eigen::Index k : group) values[k] = sum / static_cast<double>(group.size());
  }
}

void add_raman(const HarmonicResult& harmonic, const DipoleSource& source,
               const Eigen::MatrixXd& displacement, const std::vector<std::vector<Eigen::Index>>& groups,
               HarmonicIntensityResult& result) {
  result.has_raman = true;
  result.polarizability_derivatives_normal =
      source.polarizability_derivatives(harmonic.coordinates_angstrom) * displacement;
  const Eigen::Index modes = displacement.cols();
  result.raman_activity_a4_per_u.resize(modes);
  result.depolarization_ratio.resize(modes);
  for (const auto& group : groups) {
    RamanInvariants sum;
    for (const Eigen::Index k : group) {
      const RamanInvariants invariants = raman_invariants(result.polarizability_derivatives_normal.col(k));
      sum.mean_squared += invariants.mean_squared;
      sum.anisotropy_squared += invariants.anisotropy_squared;
    }
    const double activity = 45.0 * sum.mean_squared + 7.0 * sum.anisotropy_squared;
    const double denominator = 45.0 * sum.mean_squared + 4.0 * sum.anisotropy_squared;
    // A vanishing activity has no defined ratio.
    const double ratio = denominator > 0.0 && activity > std::numeric_limits<double>::min()
                             ? 3.0 * sum.anisotropy_squared / denominator
                             : std::numeric_limits<double>::quiet_NaN();
    for (const Eigen::Index k : group) {
      result.raman_activity_a4_per_u[k] = activity / static_cast<double>(group.size());
      result.depolarization_ratio[k] = ratio;
    }
  }
}

}  // namespace

RamanInvariants raman_invariants(const Eigen::Matrix<double, 6, 1>& d) {
  RamanInvariants invariants;
  const double mean = (d[0] + d[1] + d[2]) / 3.0;
  invariants.mean_squared = mean * mean;
  invariants.anisotropy_squared =
      0.5 * ((d[0] - d[1]) * (d[0] - d[1]) + (d[1] - d[2]) * (d[1] - d[2]) + (d[2] - d[0]) * (d[2] - d[0]) +
             6.0 * (d[3] * d[3] + d[4] * d[4] + d[5] * d[5]));
  return invariants;
}

CrawfordSum crawford_sum(const HarmonicResult& harmonic, const Eigen::MatrixXd& p,
                         const std::optional<Eigen::Vector3d>& dipole_e_angstrom, double modes_km_per_mol) {
  CrawfordSum sum;
  sum.modes_km_per_mol = modes_km_per_mol;
  if (!dipole_e_angstrom) return sum;
  sum.available = true;
  const double k = units::km_per_mol_per_e2_per_da;
  const Eigen::VectorXd& masses = harmonic.masses_da;
  Eigen::Matrix3d charge_sum = Eigen::Matrix3d::Zero();
  for (Eigen::Index a = 0; a < masses.size(); ++a) {
    sum.atoms_km_per_mol += k * p.block(0, 3 * a, 3, 3).squaredNorm() / masses[a];
    charge_sum += p.block(0, 3 * a, 3, 3);
  }
  sum.translation_km_per_mol = k * charge_sum.squaredNorm() / masses.sum();
  // The dipole about the centre of mass (origin-free for a neutral molecule).
  const Eigen::Vector3d centre = center_of_mass(harmonic.coordinates_angstrom, masses);
  const Eigen::Vector3d mu = *dipole_e_angstrom - charge_sum * centre;
  const Eigen::SelfAdjointEigenSolver<Eigen::Matrix3d> principal(
      inertia_tensor(harmonic.coordinates_angstrom, masses));
  const double largest = principal.eigenvalues().maxCoeff();
  for (int axis = 0; axis < 3; ++axis) {
    const double moment = principal.eigenvalues()[axis];
    if (moment <= vanishing_moment_fraction * largest) continue;
    sum.rotation_km_per_mol += k * principal.eigenvectors().col(axis).cross(mu).squaredNorm() / moment;
  }
  const double predicted = sum.atoms_km_per_mol - sum.translation_km_per_mol - sum.rotation_km_per_mol;
  sum.relative_residual =
      sum.atoms_km_per_mol > 0.0 ? std::abs(modes_km_per_mol - predicted) / sum.atoms_km_per_mol : 0.0;
  return sum;
}

HarmonicIntensityResult compute_harmonic_intensities(const HarmonicResult& harmonic,
                                                     const DipoleSource& source,
                                                     const HarmonicIntensityOptions& options) {
  const Eigen::Index modes = harmonic.mass_weighted_modes.cols();
  if (static_cast<Eigen::Index>(3 * source.atom_count()) != harmonic.coordinates_angstrom.size())
    throw Error(fmt::format("intensities: the dipole source is for {} atoms, the harmonic result for {}",
                            source.atom_count(), harmonic.coordinates_angstrom.size() / 3));
  if (!options.set_of_mode.empty() && static_cast<Eigen::Index>(options.set_of_mode.size()) != modes)
    throw Error(fmt::format("intensities: expected a set for each of the {} modes, got {}", modes,
                            options.set_of_mode.size()));
  HarmonicIntensityResult result;
  result.source = source.description();
  result.notes = source.notes();
  result.warnings = source.warnings();
  const Eigen::MatrixXd displacement = cartesian_per_normal_coordinate(harmonic);
  const Eigen::MatrixXd p = source.dipole_derivatives(harmonic.coordinates_angstrom);
  result.dipole_derivatives_normal = p * displacement;
  result.ir_km_per_mol =
      units::km_per_mol_per_e2_per_da * result.dipole_derivatives_normal.colwise().squaredNorm().transpose();
  const double total = result.ir_km_per_mol.sum();
  const auto groups = mode_groups(options.set_of_mode, modes);
  average_over_sets(result.ir_km_per_mol, groups);
  result.crawford = crawford_sum(harmonic, p, source.dipole(harmonic.coordinates_angstrom), total);
  if (source.has_polarizability_derivatives()) add_raman(harmonic, source, displacement, groups, result);
  return result;
}

}  // namespace overtone
