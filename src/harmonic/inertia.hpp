#pragma once
// Mass distribution of a geometry: centre of mass and inertia tensor. The one place these
// are computed (rigid-body motions here, rotational constants of the anharmonic stage,
// the principal frame of the symmetry detection).
#include <Eigen/Dense>

namespace overtone {

// Σ m_i x_i / Σ m_i (Å) for 3N coordinates (Å) and N masses (Da).
Eigen::Vector3d center_of_mass(const Eigen::VectorXd& coordinates_angstrom, const Eigen::VectorXd& masses_da);

// I = Σ m_i (|r_i|² 1 − r_i r_iᵀ) with r_i the position relative to the centre of mass,
// Da·Å², symmetric positive semidefinite.
Eigen::Matrix3d inertia_tensor(const Eigen::VectorXd& coordinates_angstrom, const Eigen::VectorXd& masses_da);

}  // namespace overtone
