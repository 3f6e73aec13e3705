// The screen stage's InputOptions and ScreenReportOptions keep the stage contract: the
// defaults are valid, and a value out of range is refused with a message naming the field.
#include <gtest/gtest.h>

#include "../support/option_refusal.hpp"
#include "screen/inputs.hpp"
#include "screen/screen_report.hpp"

namespace overtone {
namespace {

using testing_support::expect_refused_naming;
using testing_support::refusal_of;

TEST(ScreenInputOptions, DefaultsAreValid) { EXPECT_EQ(refusal_of(InputOptions{}), ""); }

TEST(ScreenInputOptions, AnEmptyColumnNameIsRefusedByName) {
  InputOptions no_smiles_column;
  no_smiles_column.smiles_column.clear();
  expect_refused_naming(no_smiles_column, "smiles_column");
  InputOptions no_id_column;
  no_id_column.id_column.clear();
  expect_refused_naming(no_id_column, "id_column");
}

TEST(ScreenReportOptions, DefaultsAreValid) { EXPECT_EQ(refusal_of(ScreenReportOptions{}), ""); }

TEST(ScreenReportOptions, AReversedWindowAndANegativeCriterionAreRefusedByName) {
  ScreenReportOptions reversed;
  reversed.window_min_cm1 = 3000.0;
  reversed.window_max_cm1 = 2000.0;
  expect_refused_naming(reversed, "window_max_cm1");
  ScreenReportOptions negative;
  negative.min_criterion = -1.0;
  expect_refused_naming(negative, "min_criterion");
}

}  // namespace
}  // namespace overtone
