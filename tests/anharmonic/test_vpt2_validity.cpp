// Where VPT2 does not hold: the anharmonic ratio of each mode checked against the Morse
// oscillator's closed forms, and reduced-dimensional VPT2 (modes below a wavenumber dropped
// from the force field) against VPT2 on the smaller model written without those modes.
#include <gtest/gtest.h>

#include <cmath>

#include "anharmonic/vpt2.hpp"
#include "core/error.hpp"
#include "model_helpers.hpp"

namespace overtone {
namespace {

using testing::model_force_constants;
using testing::model_harmonic;

// Closed forms evaluated in double precision: round-off only.
constexpr double closed_form_tolerance = 1e-12;
// Two runs of the same algebra on the same constants (one with extra zero entries): round-off.
constexpr double same_algebra_tolerance_cm1 = 1e-9;

Vpt2Options no_coriolis() {
  Vpt2Options options;
  options.include_coriolis = false;
  return options;
}

// A Morse oscillator V = D(1 − e^(−a r))² in the dimensionless coordinate of its harmonic
// term: with x = ω²/(4D) (cm⁻¹), φ_iii = −3√2·√(ωx) and φ_iiii = 14x (expansion of the
// exponential; Morse, Phys. Rev. 34, 57 (1929)), for which VPT2 gives the exact
// x_ii = φ_iiii/16 − 5φ_iii²/(48ω) = −x.
ForceConstantResult morse(double omega, double x) {
  return model_force_constants({omega}, [&](ForceConstantTensors& t) {
    t.set_cubic(0, 0, 0, -3.0 * std::sqrt(2.0) * std::sqrt(omega * x));
    t.set_quartic(0, 0, 0, 0, 14.0 * x);
  });
}

TEST(Vpt2Validity, MorseRatioIsTheClosedFormAndHydrogenChlorideIsWithinPerturbationTheory) {
  // H³⁵Cl: ω_e = 2990.946, ω_e x_e = 52.8186 cm⁻¹ (Huber and Herzberg 1979, as in docs/anharmonic.md). For
  // a Morse oscillator the cubic term gives the ratio √3|φ_iii|/(3ω) = √(6x/ω) and the
  // quartic one 14x/(4ω) = 3.5x/ω, smaller while x/ω < 0.49.
  const double omega = 2990.946, x = 52.8186;
  const Vpt2Result r = run_vpt2(morse(omega, x), model_harmonic({omega}), no_coriolis());
  ASSERT_EQ(r.perturbation_checks.size(), 1u);
  EXPECT_NEAR(r.perturbation_checks[0].anharmonic_ratio, std::sqrt(6.0 * x / omega), closed_form_tolerance);
  EXPECT_EQ(r.perturbation_checks[0].largest_term, (std::vector<int>{0, 0, 0}));
  EXPECT_FALSE(r.perturbation_checks[0].beyond_perturbation);
  EXPECT_NEAR(r.x_cm1(0, 0), -x, 1e-9);
  for (const auto& warning : r.warnings) EXPECT_EQ(warning.find("beyond perturbation"), std::string::npos);
}

TEST(Vpt2Validity, ShallowMorseWellIsFlagged) {
  // Ratio 1 is x/ω = 1/6: the well then holds the levels v ≤ ω/(2x) − ½ = 2.5, so the first
  // overtone lies at the top of the well. A well with x/ω = 0.2 is flagged, one with 0.15 not.
  const double omega = 100.0;
  const Vpt2Result shallow = run_vpt2(morse(omega, 0.2 * omega), model_harmonic({omega}), no_coriolis());
  EXPECT_TRUE(shallow.perturbation_checks[0].beyond_perturbation);
  ASSERT_FALSE(shallow.warnings.empty());
  EXPECT_NE(shallow.warnings.front().find("--vpt2-exclude-below 101"), std::string::npos)
      << shallow.warnings.front();
  const Vpt2Result deeper = run_vpt2(morse(omega, 0.15 * omega), model_harmonic({omega}), no_coriolis());
  EXPECT_FALSE(deeper.perturbation_checks[0].beyond_perturbation);
}

// A soft mode (50 cm⁻¹) strongly coupled to two stiff ones.
void soft_and_stiff(ForceConstantTensors& t, bool with_soft_mode) {
  const int a = with_soft_mode ? 1 : 0, b = a + 1;
  t.set_cubic(a, a, a, -250.0);
  t.set_cubic(a, a, b, 60.0);
  t.set_cubic(b, b, b, -150.0);
  t.set_quartic(a, a, a, a, 80.0);
  t.set_quartic(b, b, b, b, 40.0);
  t.set_quartic(a, a, b, b, -12.0);
  if (!with_soft_mode) return;
  t.set_cubic(0, 0, 0, 30.0);
  t.set_cubic(0, 0, 1, 40.0);
  t.set_cubic(0, 0, 2, 30.0);
  t.set_cubic(0, 1, 2, 25.0);
  t.set_quartic(0, 0, 0, 0, 400.0);
  t.set_quartic(0, 0, 1, 1, 20.0);
}

TEST(Vpt2Validity, ReducedDimensionalVpt2IsVpt2WithoutTheExcludedCoordinates) {
  // Reduced-dimensional VPT2 drops the excluded modes' coordinates from the force field
  // (common practice, no source): the result for the others is VPT2 on the model written
  // without them.
  const std::vector<double> omega{50.0, 1200.0, 1600.0};
  Vpt2Options options = no_coriolis();
  const Vpt2Result full =
      run_vpt2(model_force_constants(omega, [](ForceConstantTensors& t) { soft_and_stiff(t, true); }),
               model_harmonic(omega), options);
  // φ_0000/(4ω_0) = 2 flags the soft mode; the stiff ones stay below 1.
  EXPECT_NEAR(full.perturbation_checks[0].anharmonic_ratio, 400.0 / (4.0 * 50.0), closed_form_tolerance);
  EXPECT_TRUE(full.perturbation_checks[0].beyond_perturbation);
  EXPECT_FALSE(full.perturbation_checks[1].beyond_perturbation);
  EXPECT_FALSE(full.perturbation_checks[2].beyond_perturbation);

  options.exclude_below_cm1 = 100.0;
  const Vpt2Result reduced =
      run_vpt2(model_force_constants(omega, [](ForceConstantTensors& t) { soft_and_stiff(t, true); }),
               model_harmonic(omega), options);
  const std::vector<double> stiff{1200.0, 1600.0};
  const Vpt2Result small =
      run_vpt2(model_force_constants(stiff, [](ForceConstantTensors& t) { soft_and_stiff(t, false); }),
               model_harmonic(stiff), no_coriolis());
  EXPECT_TRUE(reduced.perturbation_checks[0].excluded);
  EXPECT_EQ(reduced.levels.size(), small.levels.size());  // ν, 2ν of each and one combination
  for (const auto& level : reduced.levels) {
    EXPECT_EQ(level.set_quanta[0], 0);
    const std::vector<int> without_soft(level.set_quanta.begin() + 1, level.set_quanta.end());
    bool found = false;
    for (const auto& other : small.levels)
      if (other.set_quanta == without_soft) {
        found = true;
        EXPECT_NEAR(level.anharmonic_cm1, other.anharmonic_cm1, same_algebra_tolerance_cm1);
      }
    EXPECT_TRUE(found);
  }
  EXPECT_EQ(reduced.x_cm1.row(0).cwiseAbs().maxCoeff(), 0.0);
  EXPECT_NEAR(reduced.x_cm1(1, 2), small.x_cm1(0, 1), same_algebra_tolerance_cm1);
  // The soft mode moved the stiff fundamental before (through x_01 and the φ_001 term of
  // x_11): the exclusion matters.
  auto fundamental = [](const Vpt2Result& r) {
    for (const auto& level : r.levels)
      if (level.set_quanta == std::vector<int>{0, 1, 0}) return level.anharmonic_cm1;
    return std::nan("");
  };
  EXPECT_GT(std::abs(fundamental(full) - fundamental(reduced)), 1.0);
}

TEST(Vpt2Validity, ExcludingEveryModeOrANegativeWavenumberIsRefused) {
  const std::vector<double> omega{50.0, 1200.0, 1600.0};
  const auto constants =
      model_force_constants(omega, [](ForceConstantTensors& t) { soft_and_stiff(t, true); });
  Vpt2Options options = no_coriolis();
  options.exclude_below_cm1 = 5000.0;
  EXPECT_THROW(run_vpt2(constants, model_harmonic(omega), options), Error);
  options.exclude_below_cm1 = -1.0;
  EXPECT_THROW(run_vpt2(constants, model_harmonic(omega), options), Error);
}

}  // namespace
}  // namespace overtone
