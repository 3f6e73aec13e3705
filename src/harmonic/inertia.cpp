#include "harmonic/inertia.hpp"

namespace overtone {

Eigen::Vector3d center_of_mass(const Eigen::VectorXd& coordinates_angstrom,
                               const Eigen::VectorXd& masses_da) {
  Eigen::Vector3d center = Eigen::Vector3d::Zero();
  for (Eigen::Index i = 0; i < masses_da.size(); ++i)
    center += masses_da[i] * coordinates_angstrom.segment<3>(3 * i);
  return center / masses_da.sum();
}

Eigen::Matrix3d inertia_tensor(const Eigen::VectorXd& coordinates_angstrom,
                               const Eigen::VectorXd& masses_da) {
  const Eigen::Vector3d center = center_of_mass(coordinates_angstrom, masses_da);
  Eigen::Matrix3d inertia = Eigen::Matrix3d::Zero();
  for (Eigen::Index i = 0; i < masses_da.size(); ++i) {
    const Eigen::Vector3d r = coordinates_angstrom.segment<3>(3 * i) - center;
    inertia += masses_da[i] * (r.squaredNorm() * Eigen::Matrix3d::Identity() - r * r.transpose());
  }
  return inertia;
}

}  // namespace overtone
