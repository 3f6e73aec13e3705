// Periodic-orbit shooting and continuation on closed-form one-dimensional models.
#include <gtest/gtest.h>

#include <boost/math/special_functions/ellint_1.hpp>
#include <cmath>

#include "core/error.hpp"
#include "core/units.hpp"
#include "families/periodic_orbits.hpp"
#include "support/model_systems.hpp"

namespace overtone {
namespace {

// Morse backbone: the issue asks for 1e-5 relative up to D_e/2.
constexpr double kMorseFrequencyRelative = 1e-5;
// Morse ladder: the issue asks for 0.01 cm⁻¹.
constexpr double kLadderCm1 = 0.01;
// Pendulum period: amplitude from cubic Hermite interpolation of 128 samples per period
// is good to ~1e-9 relative; the period itself to the closure tolerance.
constexpr double kPendulumPeriodRelative = 1e-7;
// Duffing: the first-order law errs by the second-order term 15/256·ε²·ω (Lindstedt–
// Poincaré, ε = βA²/ω²); the bound 0.1·ε²·ω fails if the first-order term were wrong.
constexpr double kDuffingSecondOrderBound = 0.1;
// Relative precision of a computed frequency (Newton stops at 1e-9 closure); the floor
// of the Duffing bound at amplitudes where ε² is below it.
constexpr double kFrequencyPrecision = 1e-9;
// Energy conservation along every orbit and closure after one period (dimensionless):
// the integrator runs at 1e-12 per step and Newton stops at 1e-9.
constexpr double kEnergyDrift = 1e-9;
constexpr double kClosure = 1e-8;

FamilySeed one_dimensional_seed(const VibrationalSystem& system) {
  FamilySeed seed;
  seed.linear_mode = Eigen::VectorXcd::Ones(1);
  seed.angular_frequency = system.harmonic_angular_frequencies()(0);
  return seed;
}

void expect_conserved_and_closed(const ContinuationResult& result) {
  for (const auto& point : result.points) {
    EXPECT_LT(point.energy_drift, kEnergyDrift) << "at E = " << point.energy;
    EXPECT_LT(point.closure_error, kClosure) << "at E = " << point.energy;
  }
}

// HCl-like constants: ω_e = 2990.946 cm⁻¹, ω_e x_e = 52.8186 cm⁻¹ (K. P. Huber and
// G. Herzberg, Constants of Diatomic Molecules (1979), H³⁵Cl X ¹Σ⁺).
constexpr double kOmegaE = 2990.946;
constexpr double kOmegaEXE = 52.8186;

TEST(PeriodicOrbits, MorseFrequencyFollowsClosedFormToHalfTheDissociationEnergy) {
  const MorseOscillator morse = morse_from_spectroscopic_constants(kOmegaE, kOmegaEXE);
  ContinuationOptions options;
  options.energy_max = 0.5 * morse.dissociation_energy();
  const ContinuationResult result = continue_family(morse, one_dimensional_seed(morse), options);
  ASSERT_EQ(result.status, ContinuationStatus::reached_energy_max) << result.message;
  ASSERT_GT(result.points.size(), 10u);
  EXPECT_NEAR(result.points.back().energy, options.energy_max, 1e-12 * options.energy_max);
  const double omega0 = morse.harmonic_angular_frequencies()(0);
  for (const auto& point : result.points) {
    // ω(E) = ω₀ sqrt(1 − E/D_e): closed form for the Morse oscillator (Morse 1929).
    const double expected = omega0 * std::sqrt(1.0 - point.energy / morse.dissociation_energy());
    EXPECT_NEAR(point.angular_frequency / expected, 1.0, kMorseFrequencyRelative)
        << "at E = " << point.energy_cm1;
    EXPECT_TRUE(point.stable);  // one degree of freedom: only the neutral pair
    EXPECT_EQ(point.floquet_multipliers.size(), 2u);
  }
  expect_conserved_and_closed(result);
  EXPECT_TRUE(result.events.empty());
}

TEST(PeriodicOrbits, MorseLadderReproducesTheMorseLevelFormula) {
  const MorseOscillator morse = morse_from_spectroscopic_constants(kOmegaE, kOmegaEXE);
  ContinuationOptions options;
  options.energy_max = 0.5 * morse.dissociation_energy();
  const ContinuationResult result = continue_family(morse, one_dimensional_seed(morse), options);
  ASSERT_GE(result.ladder.size(), 7u);
  // E_n = ω_e(n+½) − ω_e x_e(n+½)² (Morse, Phys. Rev. 34, 57 (1929)); the classical action
  // of the Morse oscillator quantized at (n+½)ħ gives it exactly.
  auto level = [](int n) { return kOmegaE * (n + 0.5) - kOmegaEXE * (n + 0.5) * (n + 0.5); };
  for (const auto& rung : result.ladder) {
    EXPECT_TRUE(rung.refined);
    EXPECT_NEAR(rung.energy_cm1, level(rung.n), kLadderCm1) << "n = " << rung.n;
    EXPECT_NEAR(rung.transition_cm1, level(rung.n) - level(0), kLadderCm1) << "n = " << rung.n;
    EXPECT_NEAR(rung.harmonic_transition_cm1, rung.n * kOmegaE, 1e-9 * kOmegaE);
  }
}

TEST(PeriodicOrbits, MorseAboveDissociationStopsWithEscape) {
  const MorseOscillator morse = morse_from_spectroscopic_constants(kOmegaE, kOmegaEXE);
  ContinuationOptions options;
  options.energy_max = 1.2 * morse.dissociation_energy();
  const ContinuationResult result = continue_family(morse, one_dimensional_seed(morse), options);
  EXPECT_EQ(result.status, ContinuationStatus::escaped) << result.message;
  EXPECT_FALSE(result.warnings.empty());
  ASSERT_FALSE(result.events.empty());
  EXPECT_EQ(result.events.back().kind, FamilyEventKind::escape);
  EXPECT_LT(result.points.back().energy, morse.dissociation_energy());
  EXPECT_GT(result.points.back().energy, 0.9 * morse.dissociation_energy());
}

TEST(PeriodicOrbits, CosinePotentialPeriodFollowsTheEllipticIntegral) {
  const double stiffness = 2.0;
  const CosineOscillator pendulum(stiffness);
  ContinuationOptions options;
  options.energy_max = 0.9 * pendulum.escape_energy();  // amplitude ≈ 0.8π
  const ContinuationResult result = continue_family(pendulum, one_dimensional_seed(pendulum), options);
  ASSERT_EQ(result.status, ContinuationStatus::reached_energy_max) << result.message;
  const double omega0 = std::sqrt(stiffness);
  for (const auto& point : result.points) {
    // T = (4/ω₀) K(sin(q_max/2)) with the amplitude the engine reports; reference
    // library: boost::math::ellint_1(k), complete elliptic integral with modulus k.
    const double expected = 4.0 / omega0 * boost::math::ellint_1(std::sin(0.5 * point.amplitude));
    EXPECT_NEAR(point.period / expected, 1.0, kPendulumPeriodRelative) << "at amplitude " << point.amplitude;
    // The amplitude itself from energy conservation: E = k(1 − cos q_max).
    EXPECT_NEAR(point.amplitude, std::acos(1.0 - point.energy / stiffness), 1e-8 * point.amplitude);
  }
  expect_conserved_and_closed(result);
}

TEST(PeriodicOrbits, DuffingFollowsTheFirstOrderFrequencyAmplitudeLaw) {
  for (const double beta : {1.0, -0.5}) {
    const double omega = 1.3;
    const DuffingOscillator duffing(omega, beta);
    ContinuationOptions options;
    options.energy_max = 0.01;  // ε = βA²/ω² ≲ 0.007
    const ContinuationResult result = continue_family(duffing, one_dimensional_seed(duffing), options);
    ASSERT_EQ(result.status, ContinuationStatus::reached_energy_max) << result.message;
    for (const auto& point : result.points) {
      const double amplitude = point.amplitude;
      const double epsilon = beta * amplitude * amplitude / (omega * omega);
      // ω(A) ≈ ω + 3βA²/(8ω): first-order Lindstedt–Poincaré (A. H. Nayfeh and D. T. Mook,
      // Nonlinear Oscillations (1979), section 4.1; from memory).
      const double first_order = omega + 3.0 * beta * amplitude * amplitude / (8.0 * omega);
      EXPECT_LE(std::abs(point.angular_frequency - first_order),
                (kDuffingSecondOrderBound * epsilon * epsilon + kFrequencyPrecision) * omega)
          << "beta " << beta << " amplitude " << amplitude;
    }
    // Hardening raises, softening lowers the frequency.
    EXPECT_EQ(result.points.back().angular_frequency > omega, beta > 0.0);
    expect_conserved_and_closed(result);
  }
}

TEST(PeriodicOrbits, CountersAreConsistent) {
  const DuffingOscillator duffing(1.0, 0.5);
  ContinuationOptions options;
  options.energy_max = 0.5;
  const ContinuationResult result = continue_family(duffing, one_dimensional_seed(duffing), options);
  ASSERT_EQ(result.status, ContinuationStatus::reached_energy_max);
  int newton = 0;
  for (const auto& point : result.points) {
    EXPECT_GE(point.newton_iterations, 1);
    EXPECT_GE(point.variational_integrations, 1);  // one for the Floquet multipliers
    EXPECT_GE(point.orbit_integrations, 1);        // one sampled period
    newton += point.newton_iterations;
  }
  EXPECT_EQ(newton, result.newton_iterations);
  EXPECT_GT(result.gradient_evaluations, 0u);
  EXPECT_EQ(result.reduced_dimension, 1);
}

TEST(PeriodicOrbits, DefaultOptionsAreValidOnceEnergyIsSet) {
  ContinuationOptions options;
  EXPECT_THROW(options.validate(), Error);  // energy_max is required
  options.energy_max = 1.0;
  EXPECT_NO_THROW(options.validate());
  options.closure_tolerance = 1e-13;
  EXPECT_THROW(options.validate(), Error);
}

TEST(PeriodicOrbits, InconsistentSeedsAreRejected) {
  const DuffingOscillator duffing(1.0, 0.5);
  ContinuationOptions options;
  options.energy_max = 0.1;
  FamilySeed seed = one_dimensional_seed(duffing);
  seed.linear_mode = Eigen::VectorXcd::Ones(2);
  EXPECT_THROW(continue_family(duffing, seed, options), Error);
  seed = one_dimensional_seed(duffing);
  seed.shift_denominator = 2;  // no shift matrix
  EXPECT_THROW(continue_family(duffing, seed, options), Error);
}

}  // namespace
}  // namespace overtone
