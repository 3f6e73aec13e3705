#pragma once
// Energies and gradients at exactly linear bonded triples, taken as the symmetric limit
// of evaluations just off linearity. Not part of the promised API (namespace detail);
// used by OpenBabelPotential.
//
// Why: Open Babel 3.1's angle code (OBForceField::VectorAngle and
// VectorAngleDerivative) returns an angle of 0° with zero derivatives whenever
// |û × v̂| < 2e-6 (IsNearZero with its default tolerance), û and v̂ the unit bond vectors
// of the triple. Within about 1e-4° of 180° every force field therefore evaluates its
// angle term at 0° instead of 180°: MMFF94's linear term 143.9325 k (1 + cos θ) gives
// 2 · 143.9325 k instead of 0 (200.85 kcal/mol for CO₂), the harmonic forms of GAFF and
// Ghemical give k π². Its torsion code also returns non-finite derivatives for a
// torsion whose three atoms are collinear (0/0), although every such torsion carries a
// zero barrier in these force fields. Outside that window the library is right (the
// angle from acos(cos θ) is then accurate to ε/sin θ ≲ 1e-10 rad).
//
// The limit: with p a displacement that moves the centre of every degenerate triple
// (random directions, fixed seed) and A(h) = ½ (E(x + h p) + E(x − h p)), the even
// average removes every odd power of h, and along the line A(h) = E(x) + a₁ h + a₂ h² +
// a₃ h³ + a₄ h⁴ + …, where the a₁ and a₃ terms appear only where the surface itself
// has a cusp at linearity (an angle whose reference is not 180°, or MMFF94's cubic
// bend term). The combination
//     E(x) ≈ 3 A(h) − 3 A(2h) + A(3h)
// cancels a₁ and a₂ exactly and leaves 6 a₃ h³ + 36 a₄ h⁴ (the same for the gradient,
// component by component). With h = 1e-4 Å and fourth derivatives of a stiff bend
// (≲ 1e4 kcal/mol/Å⁴, so a₄ ≲ 4e2) the remainder is ≲ 2e-12 kcal/mol; the round-off is at most
// 7 ε |E|. The cost is six evaluations of the terms that depend on bond angles (plus one
// of the others), only at geometries with a triple inside the band (exactly linear
// structures made so by symmetrization, and the finite-difference displacements that
// keep them linear): measured 32 µs against 6 µs per gradient for acetonitrile on MMFF94.
#include <Eigen/Dense>
#include <functional>
#include <vector>

namespace overtone::detail {

// Atoms first–centre–second of a bonded triple (0-based).
struct BondedTriple {
  int first = 0;
  int centre = 0;
  int second = 0;
};

// |û × v̂| = sin θ of the triple at x (Å), with û, v̂ the unit vectors from the centre.
double triple_sine(const Eigen::VectorXd& x, const BondedTriple& triple);

struct LinearLimitOptions {
  // Triples with |sin θ| below this (≈ 0.00057° from linear or from 0°) are evaluated by
  // the limit: five times Open Babel's own window of 2e-6, so that rounding differences
  // between its arithmetic and ours cannot leave a triple inside its window unnoticed.
  double band_sine = 1e-5;
  // h of the limit (Å): large enough that every displaced triple leaves the band by a wide
  // margin (a centre moved by h bends a triple of 1–2 Å bonds by ~1e-4 rad, ten times
  // the band), small enough that the remainder 36 a₄ h⁴ stays below 1e-10 kcal/mol.
  double step_angstrom = 1e-4;
  // Random displacement patterns tried before giving up (each is checked at all six
  // displaced geometries; the first almost always passes).
  int attempts = 16;
  unsigned seed = 20240923;

  void validate() const;  // throws Error naming the field that is out of range
};

// A function value with its gradient (gradient may be null when only the value is wanted).
using ValueAndGradient = std::function<double(const Eigen::VectorXd& x, Eigen::VectorXd* gradient)>;

class LinearLimit {
 public:
  LinearLimit() = default;
  LinearLimit(std::vector<BondedTriple> triples, const LinearLimitOptions& options);

  const std::vector<BondedTriple>& triples() const { return triples_; }
  const LinearLimitOptions& options() const { return options_; }

  // Indices (into triples()) of the triples inside the band at x; empty when an ordinary
  // evaluation at x is accurate.
  std::vector<int> degenerate_triples(const Eigen::VectorXd& x) const;

  // The displacement pattern p (3N, unit vectors on the centres of the degenerate triples,
  // zero elsewhere) for which every triple is outside the band at x ± m h p, m = 1, 2, 3.
  // Throws Error when no pattern among options().attempts passes.
  Eigen::VectorXd displacement_pattern(const Eigen::VectorXd& x, const std::vector<int>& degenerate) const;

  // f(x) (and its gradient when gradient is not null) as 3 A(h) − 3 A(2h) + A(3h), from six
  // evaluations of f at x ± m h p. When one_sided_slope is not null it receives a₁, the
  // slope of A at h = 0⁺ (energy per Å along p), from the same values:
  // a₁ h = −5/2 A(h) + 4 A(2h) − 3/2 A(3h) + O(h³). It is zero up to that remainder and
  // round-off where f is smooth, and the size of the cusp where f has one.
  double evaluate(const Eigen::VectorXd& x, const std::vector<int>& degenerate, const ValueAndGradient& f,
                  Eigen::VectorXd* gradient, double* one_sided_slope = nullptr) const;

 private:
  bool all_outside_band(const Eigen::VectorXd& x) const;

  std::vector<BondedTriple> triples_;
  LinearLimitOptions options_;
};

}  // namespace overtone::detail
