#pragma once
// Energy and analytic gradient of each MMFF94 term, templated on the scalar so that the
// same closed-form gradient runs on doubles (energy and gradient) and on dual numbers
// (exact Hessians and Hessian–vector products). Not part of the promised API (namespace
// detail).
//
// The constants below are part of the published functional forms (Halgren, J. Comput.
// Chem. 17, 490 (1996), part I, eqs. 2–8) and fix the force field's energies; they are
// not physical constants (143.9325 is Halgren's md Å → kcal/mol factor, which differs
// from the CODATA value in units.hpp in the sixth digit), so they live here.
//
// Linear centres use E = 143.9325 ka (1 + cos θ) with cos θ = u·v/(|u||v|), which is
// analytic in the Cartesian coordinates at θ = 180° as well. A non-linear centre bent to
// exactly 180° (or 0°) has a cone point there (θ is not differentiable); its bend and
// stretch–bend then contribute their energy but no θ-derivative. Torsions whose three
// consecutive atoms are collinear have no dihedral; they take cos φ = 1 there without
// derivative (Open Babel's value). Out-of-plane terms whose plane has collapsed
// contribute nothing (as in Open Babel).
#include <array>
#include <cmath>

#include "core/units.hpp"
#include "potential/detail_dual.hpp"
#include "potential/detail_internal_coordinates.hpp"
#include "potential/detail_mmff_terms.hpp"

namespace overtone::detail::mmff {

inline constexpr double md_angstrom_to_kcal_mol = 143.9325;  // Halgren I, eq. 2
inline constexpr double bond_cubic_per_angstrom = -2.0;      // cs, Halgren I, eq. 2
inline constexpr double bend_prefactor = 0.043844;           // 143.9325 (π/180)², Halgren I, eq. 3
inline constexpr double bend_cubic_per_degree = -0.007;      // cb, Halgren I, eq. 3
inline constexpr double stretch_bend_prefactor = 2.51210;    // 143.9325 π/180, Halgren I, eq. 5
inline constexpr double coulomb_buffer_angstrom = 0.05;      // δ, Halgren I, eq. 8
inline constexpr double degrees_per_radian = 180.0 / units::pi;

// Energy and its first two derivatives along one distance.
struct Radial {
  double energy = 0.0;
  double first = 0.0;   // dE/dr
  double second = 0.0;  // d²E/dr²
};

inline Radial bond_radial(const MmffBondTerm& t, double r) {
  // E = 143.9325/2 kb Δ² (1 + cs Δ + 7/12 cs² Δ²) with cs = −2: 1 − 2Δ + 7/3 Δ².
  const double k = 0.5 * md_angstrom_to_kcal_mol * t.force_constant;
  const double d = r - t.length;
  const double c1 = bond_cubic_per_angstrom;
  const double c2 = 7.0 / 12.0 * bond_cubic_per_angstrom * bond_cubic_per_angstrom;
  return {k * d * d * (1.0 + c1 * d + c2 * d * d), k * d * (2.0 + 3.0 * c1 * d + 4.0 * c2 * d * d),
          k * (2.0 + 6.0 * c1 * d + 12.0 * c2 * d * d)};
}

// One non-bonded pair at distance r: buffered 14-7 (Halgren II, eq. 2),
// E = ε A B with A = (1.07 R/(r + 0.07 R))⁷, B = 1.12 R⁷/(r⁷ + 0.12 R⁷) − 2, plus buffered
// Coulomb (Halgren I, eq. 8), E = q/(r + δ)^n, n = 1 or 2. Both energies, the summed first
// derivative and, when Second, the summed second derivative.
struct PairRadial {
  double vdw_energy = 0.0;
  double coulomb_energy = 0.0;
  double first = 0.0;
  double second = 0.0;
  double inverse_r = 0.0;
};

template <bool Second>
PairRadial pair_radial(const MmffPairTerm& t, double r, bool distance_dependent) {
  const double radius = t.vdw_radius;
  const double radius7 = t.vdw_radius7;
  const double shifted = r + 0.07 * radius;
  const double r2 = r * r;
  const double r6 = r2 * r2 * r2;
  const double denominator = r6 * r + 0.12 * radius7;
  const double inverse_shifted = 1.0 / shifted;
  const double inverse_denominator = 1.0 / denominator;
  PairRadial p;
  p.inverse_r = 1.0 / r;

  const double ratio = 1.07 * radius * inverse_shifted;
  const double ratio2 = ratio * ratio;
  const double a = ratio2 * ratio2 * ratio2 * ratio;
  const double attraction = 1.12 * radius7 * inverse_denominator;
  const double b = attraction - 2.0;
  const double a1 = -7.0 * a * inverse_shifted;
  const double b1 = -7.0 * attraction * r6 * inverse_denominator;
  const double e = t.vdw_epsilon;
  p.vdw_energy = e * a * b;
  p.first = e * (a1 * b + a * b1);
  if constexpr (Second) {
    // B'' = −1.12 R⁷ (42 r⁵ D − 98 r¹²)/D³ with D = r⁷ + 0.12 R⁷.
    const double a2 = 56.0 * a * inverse_shifted * inverse_shifted;
    const double b2 =
        -attraction * inverse_denominator * (42.0 * r2 * r2 * r - 98.0 * r6 * r6 * inverse_denominator);
    p.second = e * (a2 * b + 2.0 * a1 * b1 + a * b2);
  }
  const double q = t.charge_product;
  if (q == 0.0) return p;  // many pairs (hydrogens on carbon, carbons) carry no charge product
  const double s = 1.0 / (r + coulomb_buffer_angstrom);
  if (!distance_dependent) {
    p.coulomb_energy = q * s;
    p.first -= q * s * s;
    if constexpr (Second) p.second += 2.0 * q * s * s * s;
  } else {
    p.coulomb_energy = q * s * s;
    p.first -= 2.0 * q * s * s * s;
    if constexpr (Second) p.second += 6.0 * q * s * s * s * s;
  }
  return p;
}

// Bend (and stretch–bend) about centre p[1] with ends p[0], p[2]. Adds dE/dp to g when
// Gradient; returns the bend energy and writes the stretch–bend energy.
template <bool Gradient, class S>
S angle_energy(const MmffAngleTerm& t, const Vec3<S>* p, Vec3<S>* g, S& stretch_bend) {
  using std::atan2;
  using std::sqrt;
  const Vec3<S> u = p[0] - p[1];
  const Vec3<S> v = p[2] - p[1];
  const S uu = dot(u, u);
  const S vv = dot(v, v);
  const S ru = sqrt(uu);
  const S rv = sqrt(vv);
  const S uv = dot(u, v);
  if (t.linear) {
    const double k = md_angstrom_to_kcal_mol * t.force_constant;
    const S inverse = S(1.0) / (ru * rv);
    const S cosine = uv * inverse;
    stretch_bend = S(0.0);
    if constexpr (Gradient) {
      const Vec3<S> gu = scaled(v, inverse * k) - scaled(u, cosine * k / uu);
      const Vec3<S> gv = scaled(u, inverse * k) - scaled(v, cosine * k / vv);
      g[0] = g[0] + gu;
      g[2] = g[2] + gv;
      g[1] = g[1] - (gu + gv);
    }
    return k * (1.0 + cosine);
  }
  const Vec3<S> w = cross(u, v);
  const S ww = dot(w, w);
  const bool collinear = value_of(ww) == 0.0;
  const S theta = collinear ? S(value_of(uv) > 0.0 ? 0.0 : units::pi) : atan2(sqrt(ww), uv);
  const S delta = theta * degrees_per_radian - t.angle_deg;
  const S bend =
      0.5 * bend_prefactor * t.force_constant * delta * delta * (1.0 + bend_cubic_per_degree * delta);
  const S stretch_a = ru - t.length_a;
  const S stretch_c = rv - t.length_c;
  const S coupling = t.stretch_bend_a * stretch_a + t.stretch_bend_c * stretch_c;
  stretch_bend = t.stretch_bend ? stretch_bend_prefactor * coupling * delta : S(0.0);
  if constexpr (Gradient) {
    Vec3<S> gu{S(0.0), S(0.0), S(0.0)};
    Vec3<S> gv = gu;
    if (!collinear) {
      // dθ/du = u × w / (|u|² |w|), dθ/dv = w × v / (|v|² |w|).
      S de_dtheta = bend_prefactor * t.force_constant * delta * (1.0 + 1.5 * bend_cubic_per_degree * delta);
      if (t.stretch_bend) de_dtheta = de_dtheta + stretch_bend_prefactor * coupling;
      const S factor = de_dtheta * degrees_per_radian / sqrt(ww);
      gu = scaled(cross(u, w), factor / uu);
      gv = scaled(cross(w, v), factor / vv);
    }
    if (t.stretch_bend) {
      gu = gu + scaled(u, stretch_bend_prefactor * t.stretch_bend_a * delta / ru);
      gv = gv + scaled(v, stretch_bend_prefactor * t.stretch_bend_c * delta / rv);
    }
    g[0] = g[0] + gu;
    g[2] = g[2] + gv;
    g[1] = g[1] - (gu + gv);
  }
  return bend;
}

// Three-term torsion as a polynomial in c = cos φ: cos 2φ = 2c² − 1, cos 3φ = 4c³ − 3c,
// so no angle (and no 1/sin φ) is needed: E = ½ (V1 (1 + c) + V2 (2 − 2c²) + V3 (1 − 3c + 4c³)).
template <bool Gradient, class S>
S torsion_energy(const MmffTorsionTerm& t, const Vec3<S>* p, Vec3<S>* g) {
  using std::sqrt;
  const Vec3<S> b1 = p[1] - p[0];
  const Vec3<S> b2 = p[2] - p[1];
  const Vec3<S> b3 = p[3] - p[2];
  const Vec3<S> n1 = cross(b1, b2);
  const Vec3<S> n2 = cross(b2, b3);
  const S n1n1 = dot(n1, n1);
  const S n2n2 = dot(n2, n2);
  auto polynomial = [&](const S& c) {
    return 0.5 * (t.v1 * (1.0 + c) + t.v2 * (2.0 - 2.0 * c * c) + t.v3 * (1.0 + c * (4.0 * c * c - 3.0)));
  };
  if (value_of(n1n1) == 0.0 || value_of(n2n2) == 0.0) return polynomial(S(1.0));
  const S inverse = S(1.0) / sqrt(n1n1 * n2n2);
  const S c = dot(n1, n2) * inverse;
  if constexpr (Gradient) {
    const S de_dc = 0.5 * (t.v1 - 4.0 * t.v2 * c + t.v3 * (12.0 * c * c - 3.0));
    const Vec3<S> g1 = scaled(scaled(n2, inverse) - scaled(n1, c / n1n1), de_dc);
    const Vec3<S> g2 = scaled(scaled(n1, inverse) - scaled(n2, c / n2n2), de_dc);
    const Vec3<S> d1 = cross(b2, g1);
    const Vec3<S> d2 = cross(g1, b1) + cross(b3, g2);
    const Vec3<S> d3 = cross(g2, b2);
    g[0] = g[0] - d1;
    g[1] = g[1] + (d1 - d2);
    g[2] = g[2] + (d2 - d3);
    g[3] = g[3] + d3;
  }
  return polynomial(c);
}

// Wilson angle χ of centre→p[3] against the plane p[0]–centre–p[2], centre p[1]:
// sin χ = (u × v)·t / (|u × v| |t|).
template <bool Gradient, class S>
S out_of_plane_energy(const MmffOutOfPlaneTerm& t, const Vec3<S>* p, Vec3<S>* g) {
  using std::asin;
  using std::sqrt;
  const Vec3<S> u = p[0] - p[1];
  const Vec3<S> v = p[2] - p[1];
  const Vec3<S> bond = p[3] - p[1];
  const Vec3<S> w = cross(u, v);
  const S ww = dot(w, w);
  if (value_of(ww) == 0.0) return S(0.0);
  const S bb = dot(bond, bond);
  const S inverse = S(1.0) / sqrt(ww * bb);
  const S s = dot(w, bond) * inverse;
  const S chi = asin(s) * degrees_per_radian;
  if constexpr (Gradient) {
    const S de_ds = bend_prefactor * t.force_constant * chi * degrees_per_radian / sqrt(1.0 - s * s);
    const Vec3<S> gw = scaled(scaled(bond, inverse) - scaled(w, s / ww), de_ds);
    const Vec3<S> gb = scaled(scaled(w, inverse) - scaled(bond, s / bb), de_ds);
    const Vec3<S> gu = cross(v, gw);
    const Vec3<S> gv = cross(gw, u);
    g[0] = g[0] + gu;
    g[2] = g[2] + gv;
    g[3] = g[3] + gb;
    g[1] = g[1] - (gu + gv + gb);
  }
  return 0.5 * bend_prefactor * t.force_constant * chi * chi;
}

}  // namespace overtone::detail::mmff
