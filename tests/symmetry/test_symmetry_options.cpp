// The symmetry stage's Options keep the stage contract: the defaults are valid, and a
// value out of range is refused with a message naming the field.
#include <gtest/gtest.h>

#include <limits>

#include "../support/option_refusal.hpp"
#include "symmetry/detect_point_group.hpp"
#include "symmetry/mode_symmetry.hpp"

namespace overtone {
namespace {

using testing_support::expect_refused_naming;
using testing_support::refusal_of;

TEST(SymmetryOptions, DefaultsAreValid) {
  EXPECT_EQ(refusal_of(SymmetryOptions{}), "");
  EXPECT_EQ(refusal_of(ModeSpeciesOptions{}), "");
}

TEST(SymmetryOptions, OutOfRangeValuesAreRefusedByName) {
  ModeSpeciesOptions everything_pure;
  everything_pure.purity_tolerance = 0.5;
  expect_refused_naming(everything_pure, "purity_tolerance");
  ModeSpeciesOptions negative_degeneracy;
  negative_degeneracy.degeneracy_tolerance_cm1 = -0.1;
  expect_refused_naming(negative_degeneracy, "degeneracy_tolerance_cm1");
  ModeSpeciesOptions undefined_frame_check;
  undefined_frame_check.frame_check_tolerance_angstrom = std::numeric_limits<double>::quiet_NaN();
  expect_refused_naming(undefined_frame_check, "frame_check_tolerance_angstrom");
}

}  // namespace
}  // namespace overtone
