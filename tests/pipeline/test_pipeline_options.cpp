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

}  // namespace
}  // namespace overtone
