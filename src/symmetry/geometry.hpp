#pragma once
// Small 3-D geometry helpers shared inside the symmetry stage (not part of its contract).
#include <Eigen/Dense>
#include <string>

namespace overtone::detail {

Eigen::Matrix3d rotation_about(const Eigen::Vector3d& axis, double angle_radians);
Eigen::Matrix3d reflection_through_plane(const Eigen::Vector3d& normal);
// Rotation about z by angle followed by the reflection through the xy plane.
Eigen::Matrix3d improper_rotation_about(const Eigen::Vector3d& axis, double angle_radians);

// Axis of the proper part P = det(R)·R (unit vector, sign arbitrary) and its rotation
// angle in [0, π]; axis zero when P is the identity.
void proper_axis_and_angle(const Eigen::Matrix3d& r, Eigen::Vector3d& axis, double& angle_radians);

// Angle (in [0, 2π)) of the proper rotation p about the oriented unit axis u.
double signed_rotation_angle(const Eigen::Matrix3d& p, const Eigen::Vector3d& u);

// Reduced fraction k/m ≈ turns (in [0, 1)), m ≤ max_denominator; m = 0 if none fits.
void rational_turns(double turns, int max_denominator, int& k, int& m);

// Typographic digits.
std::string subscript_digits(const std::string& ascii);
std::string superscript_digits(const std::string& ascii);

// Orthogonal matrix with det = sign closest (Frobenius) to a·bᵀ-type cross-covariance:
// the rotation or rotoreflection R minimizing Σ |R·p_i − q_i|² for covariance Σ q_i p_iᵀ.
Eigen::Matrix3d orthogonal_procrustes(const Eigen::Matrix3d& covariance_q_pt, int determinant_sign);

}  // namespace overtone::detail
