// The potential stage's Options keep the stage contract: the defaults are valid, and a
// value out of range is refused with a message naming the field.
#include <gtest/gtest.h>

#include "../support/option_refusal.hpp"
#include "potential/detail_linear_limit.hpp"
#include "potential/detail_mmff_terms.hpp"
#include "potential/detail_out_of_plane_model.hpp"
#include "potential/mmff_potential.hpp"
#include "potential/openbabel_potential.hpp"
#include "potential/taylor_expansion_potential.hpp"

namespace overtone {
namespace {

using testing_support::expect_refused_naming;
using testing_support::refusal_of;

TEST(PotentialOptions, DefaultsAreValid) {
  EXPECT_EQ(refusal_of(MmffOptions{}), "");
  EXPECT_EQ(refusal_of(OpenBabelPotentialOptions{}), "");
  EXPECT_EQ(refusal_of(TaylorExpansionOptions{}), "");
  EXPECT_EQ(refusal_of(TaylorWriteOptions{}), "");
  EXPECT_EQ(refusal_of(detail::LinearLimitOptions{}), "");
  EXPECT_EQ(refusal_of(detail::OutOfPlaneFitOptions{}), "");
  EXPECT_EQ(refusal_of(detail::MmffAssignmentOptions{}), "");
}

TEST(PotentialOptions, OutOfRangeValuesAreRefusedByName) {
  MmffOptions no_dielectric;
  no_dielectric.dielectric_constant = 0.0;
  expect_refused_naming(no_dielectric, "dielectric_constant");
  OpenBabelPotentialOptions zero_step;
  zero_step.out_of_plane_difference_step_angstrom = 0.0;
  expect_refused_naming(zero_step, "out_of_plane_difference_step_angstrom");
  OpenBabelPotentialOptions no_attempts;  // a nested struct is checked with its owner
  no_attempts.linear_limit.attempts = 0;
  expect_refused_naming(no_attempts, "attempts");
  TaylorExpansionOptions no_hole_depth;
  no_hole_depth.hole_depth_cm1 = -10.0;
  expect_refused_naming(no_hole_depth, "hole_depth_cm1");
  TaylorWriteOptions negative_threshold;
  negative_threshold.relative_threshold = -1e-12;
  expect_refused_naming(negative_threshold, "relative_threshold");
  detail::LinearLimitOptions whole_circle;
  whole_circle.band_sine = 1.0;
  expect_refused_naming(whole_circle, "band_sine");
  detail::OutOfPlaneFitOptions underdetermined;
  underdetermined.geometries_per_unknown = 0;
  expect_refused_naming(underdetermined, "geometries_per_unknown");
  detail::MmffAssignmentOptions negative_dielectric;
  negative_dielectric.dielectric_constant = -1.0;
  expect_refused_naming(negative_dielectric, "dielectric_constant");
}

}  // namespace
}  // namespace overtone
