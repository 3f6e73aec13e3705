#include "symmetry/geometry.hpp"

#include <Eigen/Geometry>
#include <algorithm>
#include <cmath>

#include "core/units.hpp"

namespace overtone::detail {

Eigen::Matrix3d rotation_about(const Eigen::Vector3d& axis, double angle_radians) {
  return Eigen::AngleAxisd(angle_radians, axis.normalized()).toRotationMatrix();
}

Eigen::Matrix3d reflection_through_plane(const Eigen::Vector3d& normal) {
  const Eigen::Vector3d n = normal.normalized();
  return Eigen::Matrix3d::Identity() - 2.0 * n * n.transpose();
}

Eigen::Matrix3d improper_rotation_about(const Eigen::Vector3d& axis, double angle_radians) {
  return reflection_through_plane(axis) * rotation_about(axis, angle_radians);
}

void proper_axis_and_angle(const Eigen::Matrix3d& r, Eigen::Vector3d& axis, double& angle_radians) {
  const Eigen::Matrix3d p = r.determinant() < 0.0 ? Eigen::Matrix3d(-r) : r;
  const double cosine = std::clamp((p.trace() - 1.0) / 2.0, -1.0, 1.0);
  angle_radians = std::acos(cosine);
  // Below this angle the axis is numerically undefined; point-group angles are ≥ 2π/120.
  constexpr double kSmallestMeaningfulAngle = 1e-6;
  if (angle_radians < kSmallestMeaningfulAngle) {
    axis.setZero();
    return;
  }
  // (P + Pᵀ)/2 − cosθ·I = (1 − cosθ)·u·uᵀ holds for every θ, including θ = π where the
  // antisymmetric part vanishes; the antisymmetric part then only fixes the sign.
  const Eigen::Matrix3d outer = 0.5 * (p + p.transpose()) - cosine * Eigen::Matrix3d::Identity();
  Eigen::Index column = 0;
  outer.colwise().norm().maxCoeff(&column);
  axis = outer.col(column).normalized();
  const Eigen::Vector3d twice_sine_axis(p(2, 1) - p(1, 2), p(0, 2) - p(2, 0), p(1, 0) - p(0, 1));
  if (twice_sine_axis.dot(axis) < 0.0) axis = -axis;
}

double signed_rotation_angle(const Eigen::Matrix3d& p, const Eigen::Vector3d& u) {
  const Eigen::Vector3d twice_sine_axis(p(2, 1) - p(1, 2), p(0, 2) - p(2, 0), p(1, 0) - p(0, 1));
  double angle = std::atan2(0.5 * twice_sine_axis.dot(u), (p.trace() - 1.0) / 2.0);
  if (angle < 0.0) angle += 2.0 * units::pi;
  return angle;
}

void rational_turns(double turns, int max_denominator, int& k, int& m) {
  // Angles of exactly built operations are good to ~1e-14 turns; 1e-7 leaves room for
  // fitted operations while still separating denominators up to the thousands.
  constexpr double kTurnTolerance = 1e-7;
  turns -= std::floor(turns);
  for (m = 1; m <= max_denominator; ++m) {
    const double scaled = turns * m;
    k = static_cast<int>(std::lround(scaled));
    if (std::abs(scaled - k) < kTurnTolerance * m) {
      k %= m;
      return;
    }
  }
  k = 0;
  m = 0;
}

namespace {
std::string map_digits(const std::string& ascii, const char* const table[10]) {
  std::string out;
  for (char c : ascii) {
    if (c >= '0' && c <= '9')
      out += table[c - '0'];
    else
      out += c;
  }
  return out;
}
}  // namespace

std::string subscript_digits(const std::string& ascii) {
  static const char* const table[10] = {"₀", "₁", "₂", "₃", "₄", "₅", "₆", "₇", "₈", "₉"};
  return map_digits(ascii, table);
}

std::string superscript_digits(const std::string& ascii) {
  static const char* const table[10] = {"⁰", "¹", "²", "³", "⁴", "⁵", "⁶", "⁷", "⁸", "⁹"};
  return map_digits(ascii, table);
}

Eigen::Matrix3d orthogonal_procrustes(const Eigen::Matrix3d& covariance_q_pt, int determinant_sign) {
  Eigen::JacobiSVD<Eigen::Matrix3d> svd(covariance_q_pt, Eigen::ComputeFullU | Eigen::ComputeFullV);
  const Eigen::Matrix3d& u = svd.matrixU();
  const Eigen::Matrix3d& v = svd.matrixV();
  Eigen::Vector3d signs(1.0, 1.0, 1.0);
  const double current = (u * v.transpose()).determinant();
  // Flip the direction of the smallest singular value when the determinant has the wrong sign.
  if ((current > 0.0) != (determinant_sign > 0)) signs(2) = -1.0;
  return u * signs.asDiagonal() * v.transpose();
}

}  // namespace overtone::detail
