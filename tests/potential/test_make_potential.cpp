// Choosing a potential from what the user typed: a malformed potential file is reported
// as the format it declares (docs/taylor-expansion-format.md, docs/valence-force-field.md).
#include <gtest/gtest.h>

#include <cstdio>
#include <fstream>
#include <string>

#include "core/error.hpp"
#include "molecule/read_molecule.hpp"
#include "potential/make_potential.hpp"

namespace overtone {
namespace {

const std::string source_dir = OVERTONE_SOURCE_DIR;

// Each test its own file: CTest runs the tests of this suite in parallel processes.
std::string message_for_file(const std::string& text) {
  const std::string path = ::testing::TempDir() + "overtone_make_potential_" +
                           ::testing::UnitTest::GetInstance()->current_test_info()->name() + ".toml";
  {
    std::ofstream out(path, std::ios::binary);
    out << text;
  }
  const Molecule water = read_molecule(source_dir + "/molecules/water.xyz").molecule;
  std::string message;
  try {
    make_potential(path, water);
  } catch (const Error& error) {
    message = error.what();
  }
  std::remove(path.c_str());
  return message;
}

TEST(MakePotential, TaylorExpansionSyntaxErrorNamesTheTaylorFormat) {
  const std::string message = message_for_file(
      "format = \"overtone-taylor-expansion\"\nversion = 1\ncoordinates = \"cartesian\"\n[units\n");
  EXPECT_NE(message.find("taylor-expansion file"), std::string::npos) << message;
  EXPECT_NE(message.find("line 4"), std::string::npos) << message;
  EXPECT_EQ(message.find("valence force field"), std::string::npos) << message;
}

TEST(MakePotential, ValenceForceFieldSyntaxErrorNamesTheValenceFormat) {
  const std::string message = message_for_file("format_version = 1\ntitle = \"unterminated\n");
  EXPECT_NE(message.find("valence force field"), std::string::npos) << message;
  EXPECT_NE(message.find("line 2"), std::string::npos) << message;
}

TEST(MakePotential, DirectoryIsNotAPotentialFile) {
  const Molecule water = read_molecule(source_dir + "/molecules/water.xyz").molecule;
  try {
    make_potential(source_dir + "/potentials", water);
    FAIL() << "a directory is not a potential file";
  } catch (const Error& error) {
    EXPECT_NE(std::string(error.what()).find("is a directory"), std::string::npos) << error.what();
  }
}

}  // namespace
}  // namespace overtone
