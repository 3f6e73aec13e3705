#include "harmonic/normal_coordinates.hpp"

#include <cmath>

#include "core/units.hpp"

namespace overtone::detail {

NormalCoordinateFrame::NormalCoordinateFrame(const HarmonicResult& harmonic)
    : reference(harmonic.coordinates_angstrom), frequencies_cm1(harmonic.frequencies_cm1) {
  const Eigen::Index n = harmonic.mass_weighted_modes.rows();
  const Eigen::Index m = harmonic.mass_weighted_modes.cols();
  to_cartesian.resize(n, m);
  for (Eigen::Index k = 0; k < m; ++k) {
    // Q_k = q_k sqrt(ħ/ω_k) with ω_k = sqrt(λ_k) in internal units.
    const double omega = std::sqrt(std::abs(harmonic.eigenvalues[k]));
    const double length_per_q = std::sqrt(units::hbar_internal / omega);
    for (Eigen::Index r = 0; r < n; ++r)
      to_cartesian(r, k) =
          harmonic.mass_weighted_modes(r, k) * length_per_q / std::sqrt(harmonic.masses_da[r / 3]);
  }
}

Eigen::VectorXd NormalCoordinateFrame::gradient_q(const Eigen::VectorXd& cartesian_gradient) const {
  return units::cm1_per_kcal_mol * (to_cartesian.transpose() * cartesian_gradient);
}

Eigen::MatrixXd NormalCoordinateFrame::hessian_q(const Eigen::MatrixXd& cartesian_hessian) const {
  Eigen::MatrixXd h = units::cm1_per_kcal_mol * (to_cartesian.transpose() * cartesian_hessian * to_cartesian);
  return 0.5 * (h + h.transpose());
}

}  // namespace overtone::detail
