// MinimizeOptions keeps the stage contract: the defaults are valid, and a value out of
// range is refused before any work, with a message naming the field.
#include <gtest/gtest.h>

#include "../support/option_refusal.hpp"
#include "optimize/minimize.hpp"
#include "potential/potential.hpp"

namespace overtone {
namespace {

using testing_support::expect_refused_naming;
using testing_support::refusal_of;

TEST(MinimizeOptions, DefaultsAreValid) { EXPECT_EQ(refusal_of(MinimizeOptions{}), ""); }

TEST(MinimizeOptions, OutOfRangeValuesAreRefusedByName) {
  MinimizeOptions negative_tolerance;
  negative_tolerance.rms_gradient_tolerance = -1e-6;
  expect_refused_naming(negative_tolerance, "rms_gradient_tolerance");
  MinimizeOptions no_memory;
  no_memory.lbfgs_memory = 0;
  expect_refused_naming(no_memory, "lbfgs_memory");
  // A linearity tolerance is a fraction of the largest moment of inertia: 1 or more
  // would call every molecule linear.
  MinimizeOptions everything_linear;
  everything_linear.linearity_tolerance = 1.0;
  expect_refused_naming(everything_linear, "linearity_tolerance");
}

TEST(MinimizeOptions, TheDefaultLinearityToleranceIsTheHarmonicStagesOne) {
  // Numbers must not move when the tolerance reaches the Newton steps through the options.
  EXPECT_EQ(MinimizeOptions{}.linearity_tolerance, NormalModeOptions{}.linearity_tolerance);
  EXPECT_EQ(MinimizeOptions{}.linearity_tolerance, HessianOptions{}.linearity_tolerance);
}

}  // namespace
}  // namespace overtone
