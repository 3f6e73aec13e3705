#pragma once
// Forward-mode dual numbers with N derivative lanes: a value and its derivatives along N
// seed directions, propagated exactly through arithmetic and the few functions the force
// field needs. Running an analytic gradient on Dual<N> seeded with the N local
// coordinates gives the exact Hessian of that term (derivatives of the closed-form
// gradient); Dual<1> seeded with a direction gives an exact Hessian–vector product.
// Not part of the promised API (namespace detail).
#include <array>
#include <cmath>

namespace overtone::detail {

template <int N>
struct Dual {
  double v = 0.0;
  std::array<double, N> d{};

  Dual() = default;
  Dual(double value) : v(value) {}  // NOLINT: constants enter expressions implicitly
};

inline double value_of(double x) { return x; }
template <int N>
double value_of(const Dual<N>& x) {
  return x.v;
}

template <int N>
Dual<N> operator+(const Dual<N>& a, const Dual<N>& b) {
  Dual<N> r(a.v + b.v);
  for (int i = 0; i < N; ++i) r.d[i] = a.d[i] + b.d[i];
  return r;
}
template <int N>
Dual<N> operator-(const Dual<N>& a, const Dual<N>& b) {
  Dual<N> r(a.v - b.v);
  for (int i = 0; i < N; ++i) r.d[i] = a.d[i] - b.d[i];
  return r;
}
template <int N>
Dual<N> operator-(const Dual<N>& a) {
  Dual<N> r(-a.v);
  for (int i = 0; i < N; ++i) r.d[i] = -a.d[i];
  return r;
}
template <int N>
Dual<N> operator*(const Dual<N>& a, const Dual<N>& b) {
  Dual<N> r(a.v * b.v);
  for (int i = 0; i < N; ++i) r.d[i] = a.d[i] * b.v + a.v * b.d[i];
  return r;
}
template <int N>
Dual<N> operator/(const Dual<N>& a, const Dual<N>& b) {
  const double inverse = 1.0 / b.v;
  const double q = a.v * inverse;
  Dual<N> r(q);
  for (int i = 0; i < N; ++i) r.d[i] = (a.d[i] - q * b.d[i]) * inverse;
  return r;
}
template <int N>
Dual<N> operator+(const Dual<N>& a, double b) {
  Dual<N> r = a;
  r.v += b;
  return r;
}
template <int N>
Dual<N> operator+(double a, const Dual<N>& b) {
  return b + a;
}
template <int N>
Dual<N> operator-(const Dual<N>& a, double b) {
  Dual<N> r = a;
  r.v -= b;
  return r;
}
template <int N>
Dual<N> operator-(double a, const Dual<N>& b) {
  Dual<N> r(a - b.v);
  for (int i = 0; i < N; ++i) r.d[i] = -b.d[i];
  return r;
}
template <int N>
Dual<N> operator*(const Dual<N>& a, double b) {
  Dual<N> r(a.v * b);
  for (int i = 0; i < N; ++i) r.d[i] = a.d[i] * b;
  return r;
}
template <int N>
Dual<N> operator*(double a, const Dual<N>& b) {
  return b * a;
}
template <int N>
Dual<N> operator/(const Dual<N>& a, double b) {
  return a * (1.0 / b);
}
template <int N>
Dual<N> operator/(double a, const Dual<N>& b) {
  const double inverse = 1.0 / b.v;
  const double q = a * inverse;
  Dual<N> r(q);
  for (int i = 0; i < N; ++i) r.d[i] = -q * b.d[i] * inverse;
  return r;
}

// f(a) with f' given: the chain rule on every lane.
template <int N>
Dual<N> chain(const Dual<N>& a, double value, double derivative) {
  Dual<N> r(value);
  for (int i = 0; i < N; ++i) r.d[i] = derivative * a.d[i];
  return r;
}

template <int N>
Dual<N> sqrt(const Dual<N>& a) {
  const double s = std::sqrt(a.v);
  return chain(a, s, 0.5 / s);
}
template <int N>
Dual<N> asin(const Dual<N>& a) {
  return chain(a, std::asin(a.v), 1.0 / std::sqrt(1.0 - a.v * a.v));
}
template <int N>
Dual<N> atan2(const Dual<N>& y, const Dual<N>& x) {
  const double inverse = 1.0 / (x.v * x.v + y.v * y.v);
  Dual<N> r(std::atan2(y.v, x.v));
  for (int i = 0; i < N; ++i) r.d[i] = (x.v * y.d[i] - y.v * x.d[i]) * inverse;
  return r;
}

}  // namespace overtone::detail
