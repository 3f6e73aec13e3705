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

// A phase whose sine is below this is a multiple of π entered in degrees or radians (the
// conversion leaves ~1e-16): the cosine series then has no odd part in the angle.
inline constexpr double phase_multiple_of_pi_tolerance = 1e-12;
// An angle reference within this of π (rad) is 180° entered in degrees or radians.
inline constexpr double linear_reference_tolerance_rad = 1e-12;

// |c| with zero derivatives where c is exactly the zero vector. |c| has a cone point
// there (no derivative); the zero derivative is the symmetric one (the average over all
// directions of approach), which is what a function even in c needs.
template <typename S>
S norm_symmetric_at_zero(const Vec3<S>& c) {
  if (plain_value(dot(c, c)) == 0.0) return S(0.0);
  return norm(c);
}

// Angle a–center–b in radians, in [0, π]. Differentiable except exactly at 0 and π, where
// the angle has a cone point; there its derivatives are returned as zero (the symmetric
// ones) and second derivatives do not exist (use linear_bend_squared for a potential
// that is smooth there).
template <typename S>
S bend_angle(const Vec3<S>& a, const Vec3<S>& center, const Vec3<S>& b) {
  using std::atan2;
  const Vec3<S> u = a - center;
  const Vec3<S> v = b - center;
  const S sine_part = norm_symmetric_at_zero(cross(u, v));
  if (plain_value(sine_part) == 0.0) return S(plain_value(dot(u, v)) < 0.0 ? units::pi : 0.0);
  return atan2(sine_part, dot(u, v));
}

// True when a–center–b is exactly collinear (0° or 180°): where bend_angle has its cone
// point and a dihedral or a plane through the three atoms is undefined.
template <typename S>
bool exactly_collinear(const Vec3<S>& a, const Vec3<S>& center, const Vec3<S>& b) {
  const Vec3<S> c = cross(a - center, b - center);
  return plain_value(dot(c, c)) == 0.0;
}

// cos(n θ − δ) for the angle a–center–b, written through cos θ = û·v̂ (Chebyshev:
// cos nθ = T_n(cos θ)) so that it is smooth at θ = π and 0 whenever sin δ = 0; the
// sin δ part, sin nθ = sin θ U_{n−1}(cos θ), has a cone point there like the angle.
template <typename S>
S cosine_of_multiple_bend(const Vec3<S>& a, const Vec3<S>& center, const Vec3<S>& b, int n, double phase) {
  using std::cos;
  using std::sin;
  const Vec3<S> u = a - center;
  const Vec3<S> v = b - center;
  const S lengths = norm(u) * norm(v);
  const S cosine = dot(u, v) / lengths;
  // T_k and U_{k−1} by their three-term recurrences.
  S t_previous = S(1.0), t = cosine;    // T_0, T_1
  S u_previous = S(0.0), u_k = S(1.0);  // U_{−1}, U_0
  for (int k = 1; k < n; ++k) {
    const S t_next = 2.0 * cosine * t - t_previous;
    t_previous = t;
    t = t_next;
    const S u_next = 2.0 * cosine * u_k - u_previous;
    u_previous = u_k;
    u_k = u_next;
  }
  const double sin_phase = std::sin(phase);
  if (std::abs(sin_phase) < phase_multiple_of_pi_tolerance) return t * std::cos(phase);
  const S sine = norm_symmetric_at_zero(cross(u, v)) / lengths;
  return t * std::cos(phase) + sine * u_k * sin_phase;
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
