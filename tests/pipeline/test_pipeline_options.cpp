// The pipeline keeps the stage contract: its Options structs accept their defaults and
// refuse a value out of range before any work, naming the field, and check the options of
// the stages they hold.
#include <gtest/gtest.h>

#include "../support/option_refusal.hpp"
#include "pipeline/analysis.hpp"
#include "pipeline/orbit_frames.hpp"

namespace overtone {
namespace {

using testing_support::expect_refused_naming;
using testing_support::refusal_of;

TEST(PipelineOptions, DefaultsAreValid) {
  EXPECT_EQ(refusal_of(AnalysisOptions{}), "");
  EXPECT_EQ(refusal_of(AnharmonicOptions{}), "");
  EXPECT_EQ(refusal_of(OrbitFramesOptions{}), "");
}

TEST(PipelineOptions, OutOfRangeValuesAreRefusedByName) {
  AnalysisOptions negative_margin;
  negative_margin.conformer_energy_margin_kcal_mol = -0.1;
  expect_refused_naming(negative_margin, "conformer_energy_margin_kcal_mol");
  OrbitFramesOptions two_frames;
  two_frames.frames_per_period = 2;
  expect_refused_naming(two_frames, "frames_per_period");
  OrbitFramesOptions negative_energy;
  negative_energy.energies_cm1 = {100.0, -3.0};
  expect_refused_naming(negative_energy, "energies_cm1");
}

TEST(PipelineOptions, TheOptionsOfTheStagesHeldAreChecked) {
  AnalysisOptions bad_minimize;
  bad_minimize.minimize.lbfgs_memory = 0;
  expect_refused_naming(bad_minimize, "lbfgs_memory");
  AnalysisOptions bad_modes;
  bad_modes.modes.linearity_tolerance = 1.0;
  expect_refused_naming(bad_modes, "linearity_tolerance");
  AnharmonicOptions bad_force_constants;
  bad_force_constants.force_constants.minimum_frequency_cm1 = -1.0;
  expect_refused_naming(bad_force_constants, "minimum_frequency_cm1");
}

// One linearity tolerance governs the run: the normal-mode analysis's reaches the optimizer
// and the Hessian, and the defaults are unchanged by it (numbers do not move).
TEST(PipelineOptions, TheLinearityToleranceOfTheModesReachesEveryStep) {
  const AnalysisOptions defaults = options_for_steps(AnalysisOptions{});
  EXPECT_EQ(defaults.minimize.linearity_tolerance, MinimizeOptions{}.linearity_tolerance);
  EXPECT_EQ(defaults.hessian.linearity_tolerance, HessianOptions{}.linearity_tolerance);
  AnalysisOptions looser;
  constexpr double kLooserTolerance = 1e-2;  // any valid value other than the default
  looser.modes.linearity_tolerance = kLooserTolerance;
  looser.hessian.linearity_tolerance = 0.5;  // overridden: the modes' value governs
  const AnalysisOptions steps = options_for_steps(looser);
  EXPECT_EQ(steps.minimize.linearity_tolerance, kLooserTolerance);
  EXPECT_EQ(steps.hessian.linearity_tolerance, kLooserTolerance);
  EXPECT_EQ(steps.modes.linearity_tolerance, kLooserTolerance);
}

}  // namespace
}  // namespace overtone
