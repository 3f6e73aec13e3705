// Cubic and quartic force constants by finite differences: agreement of the analytic-
// Hessian and gradient-only routes and of two steps, index symmetry, the constants that
// symmetry forces to zero, degenerate partners, and the evaluations symmetry saves.
#include <gtest/gtest.h>

#include <cmath>
#include <vector>

#include "anharmonic/force_constants.hpp"
#include "core/error.hpp"
#include "core/units.hpp"
#include "support/molecule_helpers.hpp"

namespace overtone {
namespace {

using testing::prepare;
using testing::prepare_symmetric;

// Both routes err by O(h²) times fifth/sixth derivatives (dimensionless, at most a few
// hundred cm⁻¹ for these fields): 4e-4/6·300 ≈ 0.02 cm⁻¹ at h = 0.02, less for the
// differences between routes, which share the leading term.
constexpr double route_tolerance_cm1 = 0.02;
// Halving h changes the constants by ¾ of the O(h²) truncation error.
constexpr double step_tolerance_cm1 = 0.02;
// A constant symmetry forces to zero, computed without symmetry: only round-off of the
// Hessians (1e-12 relative to ω ≈ 4000 cm⁻¹) divided by h or h², and the geometry noise of
// the symmetrized structure: far below 1e-4 cm⁻¹.
constexpr double forbidden_tolerance_cm1 = 1e-4;
// Degenerate partners after group averaging: round-off only.
constexpr double partner_tolerance_cm1 = 1e-8;

const std::vector<IsotopeChoice> h2_16o{{1, 16}, {2, 1}, {3, 1}};
const std::vector<IsotopeChoice> c12_o16{{1, 16}, {2, 12}, {3, 16}};

// Forwards energies and gradients only, so the force constants take the gradient route.
class GradientOnly : public Potential {
 public:
  explicit GradientOnly(const Potential& inner) : inner_(inner) {}
  std::string description() const override { return "gradient-only " + inner_.description(); }
  std::size_t atom_count() const override { return inner_.atom_count(); }

 protected:
  double compute_energy(const Eigen::VectorXd& x) const override { return inner_.energy(x); }
  double compute_energy_and_gradient(const Eigen::VectorXd& x, Eigen::VectorXd& g) const override {
    return inner_.energy_and_gradient(x, g);
  }

 private:
  const Potential& inner_;
};

double largest_difference(const ForceConstantTensors& a, const ForceConstantTensors& b) {
  double worst = 0.0;
  for (const auto& e : a.cubic_entries(-1.0))
    worst = std::max(worst, std::abs(e.value - b.cubic(e.i, e.j, e.k)));
  for (const auto& e : a.quartic_entries(-1.0)) {
    EXPECT_TRUE(b.has_quartic(e.i, e.j, e.k, e.l));
    worst = std::max(worst, std::abs(e.value - b.quartic(e.i, e.j, e.k, e.l)));
  }
  return worst;
}

TEST(ForceConstants, AnalyticAndGradientRoutesAgree) {
  const auto water = prepare("water.xyz", "water.toml", h2_16o);
  const ForceConstantResult analytic = compute_force_constants(*water.potential, water.harmonic);
  const GradientOnly gradient_only(*water.potential);
  const ForceConstantResult from_gradients = compute_force_constants(gradient_only, water.harmonic);
  ASSERT_TRUE(analytic.ok());
  ASSERT_TRUE(from_gradients.ok());
  EXPECT_EQ(analytic.method, "analytic Hessians");
  EXPECT_EQ(from_gradients.method, "Hessians from central differences of gradients");
  EXPECT_LT(largest_difference(analytic.constants, from_gradients.constants), route_tolerance_cm1);
  // All quartic constants for three modes: 1 + 2·3 single and 4·3 mixed displacements.
  EXPECT_TRUE(analytic.full_quartic);
  EXPECT_EQ(analytic.evaluations.hessians, 19u);
  EXPECT_EQ(analytic.naive_evaluations.hessians, 19u);
  // Gradients at the distinct points p ± e_j of those displacements (no symmetry given).
  EXPECT_EQ(from_gradients.evaluations.gradients, from_gradients.naive_evaluations.gradients);
  EXPECT_EQ(from_gradients.evaluations.hessians, 0u);
}

TEST(ForceConstants, ProgressCountsEveryPointOfTheDifferenceScheme) {
  // Central differences of Hessians for all quartic constants: the reference, ±h along each
  // of the M modes and four mixed points per pair, 1 + 2M + 4·M(M−1)/2 = 1 + 2M² points
  // (the scheme of Schneider and Thiel, Chem. Phys. Lett. 157, 367 (1989), from memory).
  const auto water = prepare("water.xyz", "water.toml", h2_16o);
  std::vector<ProgressEvent> events;
  ForceConstantOptions options;
  options.progress = [&](const ProgressEvent& event) { events.push_back(event); };
  const ForceConstantResult result = compute_force_constants(*water.potential, water.harmonic, options);
  ASSERT_TRUE(result.ok());
  const int m = 3;
  ASSERT_EQ(events.size(), static_cast<std::size_t>(1 + 2 * m * m));
  for (std::size_t k = 0; k < events.size(); ++k) {
    EXPECT_EQ(events[k].stage, "force constants");
    EXPECT_EQ(events[k].done, static_cast<int>(k) + 1);
    EXPECT_EQ(events[k].total, 1 + 2 * m * m);
    if (k > 0) {
      EXPECT_GE(events[k].seconds, events[k - 1].seconds);
    }
  }
}

TEST(ForceConstants, StepHalvingChangesLittle) {
  const auto water = prepare("water.xyz", "water.toml", h2_16o);
  ForceConstantOptions half;
  half.step = 0.01;
  const auto a = compute_force_constants(*water.potential, water.harmonic);
  const auto b = compute_force_constants(*water.potential, water.harmonic, half);
  EXPECT_LT(largest_difference(a.constants, b.constants), step_tolerance_cm1);
  EXPECT_LT(a.permutation_spread_cm1, route_tolerance_cm1);
}

TEST(ForceConstants, WaterConstantsForbiddenByC2vVanish) {
  const auto water = prepare_symmetric("water.xyz", "water.toml", h2_16o);
  ASSERT_EQ(water.group.group.name, "C2v");
  const ModeSymmetry& symmetry = water.adapted.symmetry;
  // Ascending order: bend (a1), symmetric stretch (a1), antisymmetric stretch (b2);
  // textbook decomposition 2A1 + B2 (Herzberg 1945).
  EXPECT_EQ(symmetry.species(), (std::vector<std::string>{"A1", "A1", "B2"}));
  EXPECT_LT(symmetry.representation_error(), 1e-10);

  ForceConstantOptions plain;
  plain.use_symmetry = false;
  const auto without = compute_force_constants(*water.potential, water.adapted.harmonic, symmetry, plain);
  const auto with = compute_force_constants(*water.potential, water.adapted.harmonic, symmetry);
  ASSERT_TRUE(with.symmetry_used);
  ASSERT_TRUE(with.symmetry_reused_hessians);
  // An odd number of b2 indices is forbidden: φ_ij3 (i, j ≠ 3), φ_333, φ_ijk3 with one 3, φ_i333.
  std::size_t forbidden = 0;
  for (const auto& e : without.constants.cubic_entries(-1.0)) {
    const int b2 = (e.i == 2) + (e.j == 2) + (e.k == 2);
    EXPECT_EQ(detail::cubic_must_vanish(symmetry, e.i, e.j, e.k), b2 % 2 == 1);
    if (b2 % 2 == 1) {
      ++forbidden;
      EXPECT_LT(std::abs(e.value), forbidden_tolerance_cm1) << e.i << e.j << e.k;
      EXPECT_EQ(with.constants.cubic(e.i, e.j, e.k), 0.0);
    } else {
      EXPECT_NEAR(with.constants.cubic(e.i, e.j, e.k), e.value, forbidden_tolerance_cm1);
    }
  }
  EXPECT_EQ(forbidden, with.forbidden_cubic);
  EXPECT_EQ(forbidden, 4u);  // φ113, φ123, φ223, φ333
  for (const auto& e : without.constants.quartic_entries(-1.0)) {
    const int b2 = (e.i == 2) + (e.j == 2) + (e.k == 2) + (e.l == 2);
    if (b2 % 2 == 1) {
      EXPECT_LT(std::abs(e.value), forbidden_tolerance_cm1);
    }
  }
  // −h along the b2 mode is the image of +h under C2; so are the mixed displacements
  // with the b2 mode: 19 − 1 − 2·2 = 14 Hessians evaluated.
  EXPECT_EQ(with.naive_evaluations.hessians, 19u);
  EXPECT_EQ(with.evaluations.hessians, 14u);
  EXPECT_EQ(with.hessians_from_symmetry, 5u);
}

TEST(ForceConstants, CarbonDioxideDegeneratePartnersAreConsistent) {
  const auto co2 = prepare_symmetric("carbon-dioxide.xyz", "carbon-dioxide.toml", c12_o16);
  ASSERT_EQ(co2.group.group.name, "Dinfh");
  const ModeSymmetry& symmetry = co2.adapted.symmetry;
  // Ascending: the bend pair (Πu), the symmetric (Σg+) and antisymmetric (Σu+) stretches.
  EXPECT_EQ(symmetry.species(), (std::vector<std::string>{"Pi_u", "Pi_u", "Sigma_g+", "Sigma_u+"}));
  const auto fc = compute_force_constants(*co2.potential, co2.adapted.harmonic, symmetry);
  ASSERT_TRUE(fc.ok());
  ASSERT_TRUE(fc.symmetry_used);
  const auto& t = fc.constants;
  // k122 of the force field: φ_{1,2a,2a} = φ_{1,2b,2b}, and no φ_{1,2a,2b}.
  EXPECT_NEAR(t.cubic(2, 0, 0), t.cubic(2, 1, 1), partner_tolerance_cm1);
  EXPECT_NEAR(t.cubic(2, 0, 1), 0.0, partner_tolerance_cm1);
  // An isotropic quartic bend potential c(q_a² + q_b²)² has φ_aaaa = φ_bbbb = 3 φ_aabb.
  EXPECT_NEAR(t.quartic(0, 0, 0, 0), t.quartic(1, 1, 1, 1), partner_tolerance_cm1);
  EXPECT_NEAR(t.quartic(0, 0, 0, 0), 3.0 * t.quartic(0, 0, 1, 1), 1e-6);
  // Odd in the bend or in the antisymmetric stretch: forbidden.
  EXPECT_EQ(t.cubic(0, 0, 0), 0.0);
  EXPECT_EQ(t.cubic(3, 3, 3), 0.0);
  EXPECT_EQ(t.cubic(2, 2, 3), 0.0);
  EXPECT_GT(fc.forbidden_cubic, 0u);
  EXPECT_LT(fc.evaluations.hessians, fc.naive_evaluations.hessians);
  // The same constants without symmetry agree (the group average only removes noise).
  ForceConstantOptions plain;
  plain.use_symmetry = false;
  const auto without = compute_force_constants(*co2.potential, co2.adapted.harmonic, symmetry, plain);
  EXPECT_LT(largest_difference(fc.constants, without.constants), forbidden_tolerance_cm1);
}

// A three-mode model with the cyclic group C6 acting as a 120° rotation on a degenerate
// pair (q1, q2) and as −1 on q0: V = ½ω₀q₀² + ½ω(q₁² + q₂²) + κ q₀² Re((q₁ + i q₂)³)
// + λ (q₁² + q₂²)², in dimensionless coordinates of a single unit-mass "atom". Gradients only.
class CyclicModel : public Potential {
 public:
  explicit CyclicModel(const HarmonicResult& harmonic) : frame_(harmonic) {}
  std::string description() const override { return "C6 model"; }
  std::size_t atom_count() const override { return 1; }
  static constexpr double kappa = 300.0, lambda = 40.0;  // cm⁻¹

 protected:
  double compute_energy(const Eigen::VectorXd& x) const override {
    Eigen::VectorXd g;
    return compute_energy_and_gradient(x, g);
  }
  double compute_energy_and_gradient(const Eigen::VectorXd& x, Eigen::VectorXd& gradient) const override {
    Eigen::Vector3d q;
    for (int k = 0; k < 3; ++k) q[k] = x[k] / frame_.to_cartesian(k, k);
    const Eigen::VectorXd& w = frame_.frequencies_cm1;
    const double r2 = q[1] * q[1] + q[2] * q[2], re3 = q[1] * q[1] * q[1] - 3 * q[1] * q[2] * q[2];
    const double v =
        0.5 * w[0] * q[0] * q[0] + 0.5 * w[1] * r2 + kappa * q[0] * q[0] * re3 + lambda * r2 * r2;
    Eigen::Vector3d dv;
    dv[0] = w[0] * q[0] + 2 * kappa * q[0] * re3;
    dv[1] = w[1] * q[1] + kappa * q[0] * q[0] * (3 * q[1] * q[1] - 3 * q[2] * q[2]) + 4 * lambda * r2 * q[1];
    dv[2] = w[1] * q[2] - kappa * q[0] * q[0] * 6 * q[1] * q[2] + 4 * lambda * r2 * q[2];
    gradient.resize(3);
    for (int k = 0; k < 3; ++k) gradient[k] = dv[k] / frame_.to_cartesian(k, k) * units::kcal_mol_per_cm1;
    return v * units::kcal_mol_per_cm1;
  }

 private:
  detail::NormalCoordinateFrame frame_;
};

TEST(ForceConstants, GradientRouteWithSymmetryMatchesWithout) {
  // Reusing a Hessian from central differences through an operation that rotates a
  // degenerate pair by 120° would carry the truncation error tied to its stencil into the
  // outer differences; gradients may be reused through
  // any operation. With the group, the constants must be those without it.
  HarmonicResult harmonic;
  harmonic.coordinates_angstrom = Eigen::VectorXd::Zero(3);
  harmonic.masses_da = Eigen::VectorXd::Ones(1);
  harmonic.frequencies_cm1 = Eigen::Vector3d(1000.0, 1500.0, 1500.0);
  harmonic.eigenvalues.resize(3);
  for (int k = 0; k < 3; ++k)
    harmonic.eigenvalues[k] = units::eigenvalue_from_wavenumber_cm1(harmonic.frequencies_cm1[k]);
  harmonic.mass_weighted_modes = Eigen::Matrix3d::Identity();
  const CyclicModel model(harmonic);
  std::vector<Eigen::MatrixXd> operations;
  std::vector<std::string> operation_names;
  for (int k = 0; k < 6; ++k) {
    Eigen::Matrix3d r = Eigen::Matrix3d::Zero();
    r(0, 0) = k % 2 == 0 ? 1.0 : -1.0;
    r.block<2, 2>(1, 1) = Eigen::Rotation2Dd(2.0 * units::pi / 3.0 * k).toRotationMatrix();
    operations.push_back(r);
    operation_names.push_back("g" + std::to_string(k));
  }
  const ModeSymmetry symmetry(operations, operation_names, {{0}, {1, 2}});
  // The model's quintic term (∂⁵V = 12κ = 3600 cm⁻¹) makes the plain truncation error
  // (h²/6)·∂⁵V visible: with h = 0.005 it is 0.015 cm⁻¹, while a wrongly reused Hessian would
  // err by about 2κh ≈ 3 cm⁻¹.
  constexpr double model_tolerance_cm1 = 0.05;
  ForceConstantOptions options;
  options.step = 0.005;
  ForceConstantOptions plain = options;
  plain.use_symmetry = false;
  const auto with = compute_force_constants(model, harmonic, symmetry, options);
  const auto without = compute_force_constants(model, harmonic, symmetry, plain);
  ASSERT_TRUE(with.symmetry_reused_hessians);
  EXPECT_LT(with.evaluations.gradients, without.evaluations.gradients);
  EXPECT_LT(with.symmetry_adjustment_cm1, model_tolerance_cm1);
  EXPECT_LT(largest_difference(with.constants, without.constants), model_tolerance_cm1);
  // And the model's own constants: φ₁₁₁₁ = 24λ, φ₁₁₂₂ = 8λ (the quintic term adds none).
  EXPECT_NEAR(with.constants.quartic(1, 1, 1, 1), 24 * CyclicModel::lambda, model_tolerance_cm1);
  EXPECT_NEAR(with.constants.quartic(1, 1, 2, 2), 8 * CyclicModel::lambda, model_tolerance_cm1);
  EXPECT_EQ(with.constants.cubic(0, 1, 1), 0.0);  // odd in q₀
}

TEST(ForceConstants, NotAMinimumIsAStatus) {
  auto water = prepare("water.xyz", "water.toml", h2_16o);
  water.harmonic.frequencies_cm1[0] = -120.0;
  const auto fc = compute_force_constants(*water.potential, water.harmonic);
  EXPECT_EQ(fc.status, ForceConstantStatus::not_a_minimum);
  EXPECT_NE(fc.message.find("-120"), std::string::npos);
}

TEST(ForceConstants, OptionsAreChecked) {
  EXPECT_NO_THROW(validate(ForceConstantOptions{}));
  ForceConstantOptions bad;
  bad.step = 0.0;
  try {
    validate(bad);
    FAIL() << "expected an error";
  } catch (const Error& e) {
    EXPECT_NE(std::string(e.what()).find("step"), std::string::npos);
  }
}

}  // namespace
}  // namespace overtone
