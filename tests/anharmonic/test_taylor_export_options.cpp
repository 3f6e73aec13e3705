// TaylorExportOptions keeps the stage contract, checking the force-constant and writer
// options it carries: the defaults are valid, a bad value is refused by name.
#include <gtest/gtest.h>

#include "../support/option_refusal.hpp"
#include "anharmonic/taylor_export.hpp"

namespace overtone {
namespace {

using testing_support::expect_refused_naming;
using testing_support::refusal_of;

TEST(TaylorExportOptions, DefaultsAreValid) { EXPECT_EQ(refusal_of(TaylorExportOptions{}), ""); }

TEST(TaylorExportOptions, BadNestedValuesAreRefusedByName) {
  TaylorExportOptions large_step;
  large_step.force_constants.step = 1.0;
  expect_refused_naming(large_step, "step");
  TaylorExportOptions negative_threshold;
  negative_threshold.write.relative_threshold = -1.0;
  expect_refused_naming(negative_threshold, "relative_threshold");
}

}  // namespace
}  // namespace overtone
