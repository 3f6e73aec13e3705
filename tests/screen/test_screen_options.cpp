// The screen stage's InputOptions keep the stage contract: the defaults are valid, and
// an empty column name is refused with a message naming the field.
#include <gtest/gtest.h>

#include "../support/option_refusal.hpp"
#include "screen/inputs.hpp"

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

}  // namespace
}  // namespace overtone
