// Tests of reading molecules: every common format gives the same molecule, SMILES
// gets a 3-D structure, isotopes take Open Babel's isotope masses, and bad input is a
// clear overtone::Error.
#include <gtest/gtest.h>
#include <openbabel/elements.h>

#include <cstdio>
#include <fstream>
#include <functional>
#include <string>

#include "core/error.hpp"
#include "molecule/read_molecule.hpp"

namespace overtone {
namespace {

const std::string data_dir = std::string(OVERTONE_SOURCE_DIR) + "/tests/data/formats/";

// Coordinates are written with 4-5 decimals by the format writers.
constexpr double position_tolerance_angstrom = 1e-3;
// Mass of the deuteron-bearing atom: AME2016 (Wang et al., Chin. Phys. C 41, 030003
// (2017)) gives m(2H) = 2.01410177812 Da; Open Babel's table carries fewer digits.
constexpr double deuterium_mass_da = 2.01410177812;
constexpr double isotope_mass_tolerance_da = 1e-4;

std::string write_temp(const std::string& name, const std::string& text) {
  const std::string path = ::testing::TempDir() + name;
  std::ofstream(path) << text;
  return path;
}

void expect_error_containing(const std::function<void()>& action, const std::string& fragment) {
  try {
    action();
    FAIL() << "expected overtone::Error containing '" << fragment << "'";
  } catch (const Error& error) {
    EXPECT_NE(std::string(error.what()).find(fragment), std::string::npos) << error.what();
  }
}

TEST(ReadMolecule, EveryFormatGivesTheSameMolecule) {
  const Molecule reference = read_molecule(data_dir + "acetaldehyde.xyz").molecule;
  ASSERT_EQ(reference.atom_count(), 7u);
  EXPECT_EQ(reference.formula(), "C2H4O");
  for (const char* extension : {"sdf", "mol", "mol2", "cml", "pdb"}) {
    SCOPED_TRACE(extension);
    const ReadResult result = read_molecule(data_dir + "acetaldehyde." + extension);
    ASSERT_EQ(result.molecule.atom_count(), reference.atom_count());
    for (std::size_t i = 0; i < reference.atom_count(); ++i) {
      EXPECT_EQ(result.molecule.atoms[i].atomic_number, reference.atoms[i].atomic_number);
      EXPECT_LT((result.molecule.atoms[i].position_angstrom - reference.atoms[i].position_angstrom).norm(),
                position_tolerance_angstrom);
    }
    EXPECT_FALSE(result.molecule.bonds.empty());
  }
}

TEST(ReadMolecule, DefaultMassesAreThoseOfTheMostAbundantIsotope) {
  // Common practice, no source: spectra of the main isotopologue use isotopic masses.
  const Molecule molecule = read_molecule(data_dir + "acetaldehyde.xyz").molecule;
  for (const auto& atom : molecule.atoms)
    EXPECT_DOUBLE_EQ(atom.mass_da, OpenBabel::OBElements::GetExactMass(atom.atomic_number, 0));
}

TEST(ReadMolecule, SmilesGetsAThreeDimensionalStructureWithHydrogens) {
  ReadOptions options;
  options.input_is_smiles = true;
  const ReadResult result = read_molecule("C=O", options);
  EXPECT_TRUE(result.geometry_built_from_smiles);
  EXPECT_EQ(result.molecule.formula(), "CH2O");
  // A real geometry: the C=O bond near its usual length (1.2 Å, common practice).
  const double bond =
      (result.molecule.atoms[0].position_angstrom - result.molecule.atoms[1].position_angstrom).norm();
  EXPECT_GT(bond, 1.1);
  EXPECT_LT(bond, 1.35);
}

TEST(ReadMolecule, IsotopeChoicesSetMassNumberAndMass) {
  ReadOptions options;
  options.isotopes = {parse_isotope_choice("4=2"), parse_isotope_choice(" 1 = 13 ")};
  const Molecule molecule = read_molecule(data_dir + "acetaldehyde.xyz", options).molecule;
  ASSERT_EQ(molecule.atoms[3].atomic_number, 1);
  EXPECT_EQ(molecule.atoms[3].mass_number, 2);
  EXPECT_NEAR(molecule.atoms[3].mass_da, deuterium_mass_da, isotope_mass_tolerance_da);
  EXPECT_EQ(molecule.atoms[0].mass_number, 13);
  EXPECT_EQ(isotope_label(molecule.atoms[0]), "13C");
}

TEST(ReadMolecule, BadInputIsAClearError) {
  expect_error_containing([] { read_molecule(data_dir + "no-such-file.xyz"); }, "does not exist");
  const std::string empty = write_temp("empty.xyz", "");
  expect_error_containing([&] { read_molecule(empty); }, "is empty");
  const std::string unknown = write_temp("unknown.xyz", "2\nx\nO 0 0 0\nQq 0 0 1.2\n");
  expect_error_containing([&] { read_molecule(unknown); }, "atom 2");
  const std::string overlapping = write_temp("overlap.xyz", "2\nx\nO 0 0 0\nH 0 0 0.05\n");
  expect_error_containing([&] { read_molecule(overlapping); }, "apart");
  const std::string garbage = write_temp("garbage.sdf", "this is not a molecule\n");
  expect_error_containing([&] { read_molecule(garbage); }, "no molecule could be read");
  const std::string no_extension = write_temp("molecule", "1\nx\nHe 0 0 0\n");
  expect_error_containing([&] { read_molecule(no_extension); }, "extension");
  const std::string odd_format = write_temp("molecule.notaformat", "1\nx\nHe 0 0 0\n");
  expect_error_containing([&] { read_molecule(odd_format); }, "not a molecule format");

  ReadOptions smiles;
  smiles.input_is_smiles = true;
  expect_error_containing([&] { read_molecule("C1CC", smiles); }, "not a valid smiles");

  ReadOptions isotopes;
  isotopes.isotopes = {{2, 30}};  // 30C has no entry in the isotope table
  expect_error_containing([&] { read_molecule(data_dir + "acetaldehyde.xyz", isotopes); }, "no isotope 30C");
  isotopes.isotopes = {{8, 2}};
  expect_error_containing([&] { read_molecule(data_dir + "acetaldehyde.xyz", isotopes); }, "atoms 1 to 7");
  expect_error_containing([] { parse_isotope_choice("2:2"); }, "N=A");
}

}  // namespace
}  // namespace overtone
