// The families stage keeps the stage contract: every Options struct of src/families accepts
// its defaults and refuses a value out of range before any work, naming the field; the
// outer FamiliesOptions checks the ones it holds.
#include <gtest/gtest.h>

#include <limits>

#include "../support/option_refusal.hpp"
#include "families/amplitude_scan.hpp"
#include "families/families.hpp"

namespace overtone {
namespace {

using testing_support::expect_refused_naming;
using testing_support::refusal_of;

// FamiliesOptions needs one energy range when it continues families (no valid default for
// it: the range is the user's question).
FamiliesOptions with_a_range() {
  FamiliesOptions options;
  options.quanta = 1.0;
  return options;
}

TEST(FamiliesOptions, DefaultsAreValid) {
  EXPECT_EQ(refusal_of(with_a_range()), "");
  EXPECT_EQ(refusal_of(EnumerationOptions{}), "");
  EXPECT_EQ(refusal_of(BranchSwitchingOptions{}), "");
  EXPECT_EQ(refusal_of(ResonantSeedOptions{}), "");
  EXPECT_EQ(refusal_of(OrbitCountOptions{}), "");
  EXPECT_EQ(refusal_of(AmplitudeScanOptions{}), "");
  EXPECT_EQ(refusal_of(MolecularSystemOptions{}), "");
  ContinuationOptions continuation;
  continuation.energy_max = 1.0;  // required: the family's own range
  EXPECT_EQ(refusal_of(continuation), "");
}

TEST(FamiliesOptions, OutOfRangeValuesAreRefusedByName) {
  FamiliesOptions no_range;
  expect_refused_naming(no_range, "quanta");
  FamiliesOptions negative_threads = with_a_range();
  negative_threads.threads = -1;
  expect_refused_naming(negative_threads, "threads");
  ContinuationOptions no_energy;
  expect_refused_naming(no_energy, "energy_max");
  AmplitudeScanOptions one_point;
  one_point.points = 1;
  expect_refused_naming(one_point, "points");
  MolecularSystemOptions no_step;
  no_step.finite_difference_step_angstrom = 0.0;
  expect_refused_naming(no_step, "finite_difference_step_angstrom");
  MolecularSystemOptions no_barrier_height;
  no_barrier_height.escape_energy_cm1 = std::numeric_limits<double>::quiet_NaN();
  expect_refused_naming(no_barrier_height, "escape_energy_cm1");
  ResonantSeedOptions negative_detuning;
  negative_detuning.relative_detuning = -1e-3;
  expect_refused_naming(negative_detuning, "relative_detuning");
}

TEST(FamiliesOptions, TheInnerOptionsAreCheckedByTheOuterOnes) {
  FamiliesOptions bad_order = with_a_range();
  bad_order.enumeration.resonance_orders = {2, 0};
  expect_refused_naming(bad_order, "resonance_orders");
  FamiliesOptions bad_closure = with_a_range();
  bad_closure.continuation.closure_tolerance = 1.0;
  expect_refused_naming(bad_closure, "closure_tolerance");
  FamiliesOptions bad_depth = with_a_range();
  bad_depth.branches.depth = -1;
  expect_refused_naming(bad_depth, "depth");
  FamiliesOptions no_bands = with_a_range();
  no_bands.orbit_count.bands = 0;
  expect_refused_naming(no_bands, "bands");
  FamiliesOptions bad_detuning = with_a_range();
  bad_detuning.resonant_seeds.relative_detuning = -1.0;
  expect_refused_naming(bad_detuning, "relative_detuning");
}

}  // namespace
}  // namespace overtone
