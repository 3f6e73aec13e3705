// The molecule stage's Options keep the stage contract: the defaults are valid, and a
// value out of range is refused with a message naming the field.
#include <gtest/gtest.h>

#include <string>

#include "../support/option_refusal.hpp"
#include "molecule/conformer_starts.hpp"
#include "molecule/read_molecule.hpp"

namespace overtone {
namespace {

using testing_support::expect_refused_naming;
using testing_support::refusal_of;

TEST(MoleculeOptions, DefaultsAreValid) {
  EXPECT_EQ(refusal_of(ReadOptions{}), "");
  EXPECT_EQ(refusal_of(ConformerStartOptions{}), "");
}

TEST(MoleculeOptions, OutOfRangeValuesAreRefusedByName) {
  ReadOptions before_the_first;
  before_the_first.structure_index = -1;
  expect_refused_naming(before_the_first, "structure_index");
  ReadOptions no_overlap_test;
  no_overlap_test.minimum_interatomic_distance_angstrom = 0.0;
  expect_refused_naming(no_overlap_test, "minimum_interatomic_distance_angstrom");
  ConformerStartOptions negative_starts;
  negative_starts.max_rotor_starts = -1;
  expect_refused_naming(negative_starts, "max_rotor_starts");
}

TEST(MoleculeOptions, ReadingRefusesBadOptionsBeforeTouchingTheInput) {
  ReadOptions options;
  options.structure_index = -2;
  options.input_is_smiles = true;
  try {
    read_molecule("O", options);
    FAIL() << "expected an error for structure_index -2";
  } catch (const Error& error) {
    EXPECT_NE(std::string(error.what()).find("structure_index"), std::string::npos) << error.what();
  }
}

}  // namespace
}  // namespace overtone
