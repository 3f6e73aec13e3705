#pragma once
// Internal coordinates as templated functions of atom positions, so that the same code
// evaluates plain doubles, first-order and nested (second-order) Eigen AutoDiffScalar.
// Not part of the promised API (namespace detail).
//
// Every formula here is chosen to stay differentiable where the physics needs it:
// angles through atan2 (no acos, whose derivative is infinite at 0 and π), and the linear
// bend through the half squared norm of the sum of unit bond vectors, which has no
// cancellation near linearity.
#include <array>
#include <cmath>

#include "core/units.hpp"

namespace overtone::detail {

template <typename S>
struct Vec3 {
  S x, y, z;
};

template <typename S>
Vec3<S> operator-(const Vec3<S>& a, const Vec3<S>& b) {
  return {a.x - b.x, a.y - b.y, a.z - b.z};
}
template <typename S>
Vec3<S> operator+(const Vec3<S>& a, const Vec3<S>& b) {
  return {a.x + b.x, a.y + b.y, a.z + b.z};
}
template <typename S, typename T>
Vec3<S> scaled(const Vec3<S>& a, const T& factor) {
  return {a.x * factor, a.y * factor, a.z * factor};
}
template <typename S>
S dot(const Vec3<S>& a, const Vec3<S>& b) {
  return a.x * b.x + a.y * b.y + a.z * b.z;
}
template <typename S>
Vec3<S> cross(const Vec3<S>& a, const Vec3<S>& b) {
  return {a.y * b.z - a.z * b.y, a.z * b.x - a.x * b.z, a.x * b.y - a.y * b.x};
}
template <typename S>
S norm(const Vec3<S>& a) {
  using std::sqrt;
  return sqrt(dot(a, a));
}

// Plain double value of any scalar (double or nested AutoDiffScalar), for branch decisions.
inline double plain_value(double v) { return v; }
template <typename S>
double plain_value(const S& v) {
  return plain_value(v.value());
}

// |a − b|, Å.
template <typename S>
S distance(const Vec3<S>& a, const Vec3<S>& b) {
  return norm(a - b);
}

// Angle a–center–b in radians, in [0, π]. Differentiable except exactly at 0 and π
// (use linear_bend_squared there).
template <typename S>
S bend_angle(const Vec3<S>& a, const Vec3<S>& center, const Vec3<S>& b) {
  using std::atan2;
  const Vec3<S> u = a - center;
  const Vec3<S> v = b - center;
  return atan2(norm(cross(u, v)), dot(u, v));
}

// Coefficients c_n of s² = Σ_{n≥1} c_n w^n, where s = π − θ and w = 1 + cos θ = 1 − cos s.
// From s = arccos(1 − w) = 2 arcsin(√(w/2)) and the series
// arcsin²(x) = ½ Σ_{n≥1} (2x)^{2n} / (n² C(2n, n)):  c_n = 2^{n+1} / (n² C(2n, n)),
// so c_1 = 2, c_{n+1} = c_n n² / ((n + 1)(2n + 1)), c_n → 2^{-n} asymptotically.
inline constexpr int linear_bend_series_terms = 30;
// Below this w (s ≈ 41°) the series is used: its terms fall like (w/2)^n, so 30 terms
// leave a remainder below 1e-25 relative; above it the direct atan2 form is smooth.
inline constexpr double linear_bend_series_limit = 0.25;

inline const std::array<double, linear_bend_series_terms>& linear_bend_series_coefficients() {
  static const std::array<double, linear_bend_series_terms> coefficients = [] {
    std::array<double, linear_bend_series_terms> c{};
    c[0] = 2.0;
    for (int n = 1; n < linear_bend_series_terms; ++n)
      c[n] = c[n - 1] * double(n) * double(n) / (double(n + 1) * double(2 * n + 1));
    return c;
  }();
  return coefficients;
}

// s² = (π − θ)² for the angle a–center–b, analytic in the Cartesian coordinates at
// θ = π (where θ itself is not differentiable). Radians².
template <typename S>
S linear_bend_squared(const Vec3<S>& a, const Vec3<S>& center, const Vec3<S>& b) {
  const Vec3<S> u = a - center;
  const Vec3<S> v = b - center;
  const Vec3<S> unit_sum = scaled(u, S(1.0) / norm(u)) + scaled(v, S(1.0) / norm(v));
  const S w = 0.5 * dot(unit_sum, unit_sum);  // = 1 + cos θ, accurate near θ = π
  const double w_value = plain_value(w);
  if (w_value < linear_bend_series_limit) {
    // Terms kept: the remainder's second derivative in w, bounded by Σ_{k>n} 4 k² (w/2)^{k−2}
    // (since c_k ≤ 4 · 2^{−k}), must fall below 1e-17; near the linear equilibrium a few
    // terms suffice, at the switch about 25.
    int terms = 3;
    while (terms < linear_bend_series_terms &&
           4.0 * terms * terms * std::pow(0.5 * w_value, terms - 2) > 1e-17)
      ++terms;
    const auto& c = linear_bend_series_coefficients();
    S sum = S(c[terms - 1]);
    for (int n = terms - 2; n >= 0; --n) sum = sum * w + c[n];
    return sum * w;
  }
  using std::atan2;
  const S s = units::pi - atan2(norm(cross(u, v)), dot(u, v));
  return s * s;
}

// Dihedral angle a–b–c–d in radians, in (−π, π], IUPAC sign (positive clockwise looking
// from b to c). Undefined when three consecutive atoms are collinear.
template <typename S>
S dihedral_angle(const Vec3<S>& a, const Vec3<S>& b, const Vec3<S>& c, const Vec3<S>& d) {
  using std::atan2;
  const Vec3<S> b1 = b - a;
  const Vec3<S> b2 = c - b;
  const Vec3<S> b3 = d - c;
  const Vec3<S> n1 = cross(b1, b2);
  const Vec3<S> n2 = cross(b2, b3);
  return atan2(norm(b2) * dot(b1, n2), dot(n1, n2));
}

// Wilson out-of-plane angle (radians) of the bond center→d against the plane of
// a–center–b: sin χ = n̂·ê(center→d), n̂ the unit normal along (a − center) × (b − center).
template <typename S>
S out_of_plane_angle(const Vec3<S>& center, const Vec3<S>& a, const Vec3<S>& b, const Vec3<S>& d) {
  using std::asin;
  const Vec3<S> normal = cross(a - center, b - center);
  const Vec3<S> bond = d - center;
  return asin(dot(normal, bond) / (norm(normal) * norm(bond)));
}

// Signed height (Å) of center above the plane of l1, l2, l3, positive on the side
// (l2 − l1) × (l3 − l1) points to.
template <typename S>
S pyramid_height(const Vec3<S>& center, const Vec3<S>& l1, const Vec3<S>& l2, const Vec3<S>& l3) {
  const Vec3<S> normal = cross(l2 - l1, l3 - l1);
  return dot(normal, center - l1) / norm(normal);
}

}  // namespace overtone::detail
