// AssignOptions keeps the stage contract: the defaults are valid, and a value out of
// range is refused with a message naming the field.
#include <gtest/gtest.h>

#include "../support/option_refusal.hpp"
#include "assign/assignment.hpp"

namespace overtone {
namespace {

using testing_support::expect_refused_naming;
using testing_support::refusal_of;

TEST(AssignOptions, DefaultsAreValid) { EXPECT_EQ(refusal_of(AssignOptions{}), ""); }

TEST(AssignOptions, OutOfRangeValuesAreRefusedByName) {
  AssignOptions no_error;
  no_error.expected_error_cm1 = 0.0;
  expect_refused_naming(no_error, "expected_error_cm1");
  AssignOptions negative_cost;
  negative_cost.polarized_mismatch_cost = -1.0;
  expect_refused_naming(negative_cost, "polarized_mismatch_cost");
  AssignOptions no_rounds;
  no_rounds.max_scale_rounds = 0;
  expect_refused_naming(no_rounds, "max_scale_rounds");
}

}  // namespace
}  // namespace overtone
