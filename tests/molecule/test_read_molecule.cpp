// Tests of reading molecules: every common format gives the same molecule, SMILES
// gets a 3-D structure, isotopes take Open Babel's isotope masses, and bad input is a
// clear overtone::Error.
#include <gtest/gtest.h>
#include <openbabel/elements.h>

#include <cstdio>
#include <filesystem>
#include <fstream>
#include <functional>
#include <string>

#include "core/error.hpp"
#include "molecule/read_molecule.hpp"

namespace overtone {
namespace {

const std::string data_dir = std::string(OVERTONE_SOURCE_DIR) + "/tests/data/formats/";
const std::string incomplete_dir = std::string(OVERTONE_SOURCE_DIR) + "/tests/data/incomplete/";
// Debian's rdkit-data package: 200 records of the NCI open database as 2-D drawings
// without hydrogen atoms.
const std::string nci_first_200 = "/usr/share/RDKit/Data/NCI/first_200.props.sdf";

// Coordinates are written with 4-5 decimals by the format writers.
constexpr double position_tolerance_angstrom = 1e-3;
// Mass of the deuteron-bearing atom: AME2016 (Wang et al., Chin. Phys. C 41, 030003
// (2017)) gives m(2H) = 2.01410177812 Da; Open Babel's table carries fewer digits.
constexpr double deuterium_mass_da = 2.01410177812;
constexpr double isotope_mass_tolerance_da = 1e-4;
// Average molecular weights: the SDF's AMW field is given to 1e-5 Da, and standard
// atomic weights (Open Babel's table) differ between editions by up to ~1e-3 Da per atom.
constexpr double average_molecular_weight_tolerance_da = 0.02;
// A tetrahedral centre lifts atoms ~0.5 Å out of any plane (common practice, no source);
// a drawing leaves them all within 1e-4 Å of it.
constexpr double clearly_three_dimensional_angstrom = 0.3;

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

double largest_distance_from_best_plane(const Molecule& molecule) {
  Eigen::MatrixXd points(static_cast<Eigen::Index>(molecule.atom_count()), 3);
  for (std::size_t i = 0; i < molecule.atom_count(); ++i)
    points.row(static_cast<Eigen::Index>(i)) = molecule.atoms[i].position_angstrom.transpose();
  const Eigen::MatrixXd centred = points.rowwise() - points.colwise().mean();
  const Eigen::JacobiSVD<Eigen::MatrixXd> svd(centred, Eigen::ComputeThinV);
  return (centred * svd.matrixV().col(2)).cwiseAbs().maxCoeff();
}

double average_molecular_weight(const Molecule& molecule) {
  double weight = 0.0;
  for (const auto& atom : molecule.atoms) weight += OpenBabel::OBElements::GetMass(atom.atomic_number);
  return weight;
}

bool has_warning_containing(const ReadResult& result, const std::string& fragment) {
  for (const auto& warning : result.warnings)
    if (warning.find(fragment) != std::string::npos) return true;
  return false;
}

TEST(ReadMolecule, TwoDimensionalDrawingWithoutHydrogensIsCompletedWithAWarning) {
  // Ethanol drawn as C–C–O in 2-D: C2H6O (the molecule's formula, common practice).
  const ReadResult result = read_molecule(incomplete_dir + "ethanol-drawing.mol");
  EXPECT_EQ(result.molecule.formula(), "C2H6O");
  EXPECT_EQ(result.hydrogens_added, 6);
  EXPECT_TRUE(result.geometry_built_from_drawing);
  EXPECT_TRUE(has_warning_containing(result, "2-d drawing")) << ::testing::PrintToString(result.warnings);
  EXPECT_TRUE(has_warning_containing(result, "added 6 hydrogen"));
  // The file's atoms keep their numbers; added hydrogens follow.
  EXPECT_EQ(result.molecule.atoms[0].atomic_number, 6);
  EXPECT_EQ(result.molecule.atoms[2].atomic_number, 8);
  EXPECT_GT(largest_distance_from_best_plane(result.molecule), clearly_three_dimensional_angstrom);
}

TEST(ReadMolecule, FirstNciRecordIsMethylbenzoquinoneWithItsHydrogens) {
  if (!std::filesystem::exists(nci_first_200))
    GTEST_SKIP() << nci_first_200 << " is missing (Debian package rdkit-data; tools/setup installs it)";
  const ReadResult result = read_molecule(nci_first_200);
  // 2-methyl-1,4-benzoquinone is C7H6O2 (from its name); the record's AMW field gives
  // its average molecular weight, 122.12344.
  EXPECT_EQ(result.molecule.formula(), "C7H6O2");
  EXPECT_EQ(result.molecule.atom_count(), 15u);
  EXPECT_NEAR(average_molecular_weight(result.molecule), 122.12344, average_molecular_weight_tolerance_da);
  EXPECT_EQ(result.hydrogens_added, 6);
  EXPECT_TRUE(result.geometry_built_from_drawing);
  EXPECT_TRUE(has_warning_containing(result, "2-d drawing")) << ::testing::PrintToString(result.warnings);
  // The methyl hydrogens leave the ring plane.
  EXPECT_GT(largest_distance_from_best_plane(result.molecule), clearly_three_dimensional_angstrom);
}

TEST(ReadMolecule, EveryStructureOfAScreeningFileIsCompleted) {
  if (!std::filesystem::exists(nci_first_200))
    GTEST_SKIP() << nci_first_200 << " is missing (Debian package rdkit-data; tools/setup installs it)";
  const std::vector<ReadResult> results = read_all_molecules(nci_first_200);
  ASSERT_EQ(results.size(), 200u);
  int with_hydrogens = 0;
  for (const auto& result : results) {
    EXPECT_TRUE(result.geometry_built_from_drawing);
    for (const auto& atom : result.molecule.atoms)
      if (atom.atomic_number == 1) {
        ++with_hydrogens;
        break;
      }
  }
  // Every record has hydrogens except those with none to add (e.g. a perhalogenated one).
  EXPECT_GE(with_hydrogens, 190);
  EXPECT_EQ(results[0].molecule.formula(), "C7H6O2");
}

TEST(ReadMolecule, FlatDrawingLabelledThreeDimensionalIsRebuilt) {
  // Ethane with every atom in one plane: its sp3 carbons cannot be planar.
  const ReadResult result = read_molecule(incomplete_dir + "ethane-flat.sdf");
  EXPECT_EQ(result.molecule.formula(), "C2H6");
  EXPECT_EQ(result.hydrogens_added, 0);
  EXPECT_TRUE(result.geometry_built_from_drawing);
  EXPECT_TRUE(has_warning_containing(result, "one plane")) << ::testing::PrintToString(result.warnings);
  EXPECT_GT(largest_distance_from_best_plane(result.molecule), clearly_three_dimensional_angstrom);
}

TEST(ReadMolecule, PlanarMoleculeInThreeDimensionsIsKeptAsGiven) {
  const ReadResult result = read_molecule(incomplete_dir + "benzene-planar.sdf");
  EXPECT_EQ(result.molecule.formula(), "C6H6");
  EXPECT_FALSE(result.geometry_built_from_drawing);
  EXPECT_TRUE(result.warnings.empty()) << ::testing::PrintToString(result.warnings);
  const Molecule reference =
      read_molecule(std::string(OVERTONE_SOURCE_DIR) + "/tests/data/symmetry/benzene.D6h.xyz").molecule;
  for (std::size_t i = 0; i < reference.atom_count(); ++i)
    EXPECT_LT((result.molecule.atoms[i].position_angstrom - reference.atoms[i].position_angstrom).norm(),
              position_tolerance_angstrom);
}

TEST(ReadMolecule, ThreeDimensionalHeavyAtomsGetHydrogensAndKeepTheirPositions) {
  const ReadResult result = read_molecule(incomplete_dir + "acetaldehyde-heavy-atoms.sdf");
  EXPECT_EQ(result.molecule.formula(), "C2H4O");
  EXPECT_EQ(result.hydrogens_added, 4);
  EXPECT_FALSE(result.geometry_built_from_drawing);
  EXPECT_TRUE(has_warning_containing(result, "4 hydrogen atom(s) implicit"))
      << ::testing::PrintToString(result.warnings);
  const Molecule complete = read_molecule(data_dir + "acetaldehyde.sdf").molecule;
  for (std::size_t i = 0; i < 3; ++i)
    EXPECT_LT((result.molecule.atoms[i].position_angstrom - complete.atoms[i].position_angstrom).norm(),
              position_tolerance_angstrom);
}

TEST(ReadMolecule, IncompleteStructuresAreRefusedWhenCompletionIsOff) {
  ReadOptions options;
  options.incomplete_structures = IncompleteStructurePolicy::refuse;
  expect_error_containing([&] { read_molecule(incomplete_dir + "ethanol-drawing.mol", options); },
                          "2-d drawing, and it leaves 6 hydrogen atom(s) implicit");
  expect_error_containing([&] { read_molecule(incomplete_dir + "acetaldehyde-heavy-atoms.sdf", options); },
                          "not a complete 3-d structure");
  EXPECT_NO_THROW(read_molecule(data_dir + "acetaldehyde.sdf", options));
}

TEST(ReadMolecule, NonFiniteCoordinatesAreRefusedWithTheirLine) {
  const std::string nan_xyz = write_temp("nan.xyz", "3\nwater\nO 0 0 0\nH 0.96 0 0\nH -0.24 0.93 nan\n");
  expect_error_containing([&] { read_molecule(nan_xyz); }, "atom 3 (H) has a non-finite coordinate");
  expect_error_containing([&] { read_molecule(nan_xyz); }, "line 5");
  const std::string inf_xyz = write_temp("inf.xyz", "3\nwater\nO 0 0 0\nH 0.96 0 1e999\nH -0.24 0.93 0\n");
  expect_error_containing([&] { read_molecule(inf_xyz); }, "line 4");
  const std::string inf_cml = write_temp(
      "inf.cml",
      "<molecule>\n <atomArray>\n  <atom id=\"a1\" elementType=\"O\" x3=\"0\" y3=\"0\" z3=\"0\"/>\n"
      "  <atom id=\"a2\" elementType=\"H\" x3=\"0.96\" y3=\"inf\" z3=\"0\"/>\n </atomArray>\n</molecule>\n");
  expect_error_containing([&] { read_molecule(inf_cml); }, "line 4");
}

TEST(ReadMolecule, XyzFileWithMoreAtomLinesThanItsCountIsRefused) {
  const std::string short_count = write_temp("short.xyz", "2\nwater\nO 0 0 0\nH 0.96 0 0\nH -0.24 0.93 0\n");
  expect_error_containing([&] { read_molecule(short_count); }, "line 1 gives 2 atom(s), but line 5");
  // Several structures, each with its count, remain fine, and so do trailing blank lines.
  const std::string two =
      write_temp("two.xyz", "2\nfirst\nH 0 0 0\nH 0.74 0 0\n2\nsecond\nH 0 0 0\nH 0.75 0 0\n\n\n");
  EXPECT_EQ(read_all_molecules(two).size(), 2u);
}

TEST(ReadMolecule, XyzAtomCountBeyondAnyIntegerIsAReadErrorNotACrash) {
  // Found by the XYZ fuzz target: a count line of 23 digits threw std::out_of_range from
  // the atom-count check instead of a read error.
  const std::string huge = write_temp("huge-count.xyz", "99999999999999999999999\ntitle\nH 0 0 0\n");
  expect_error_containing([&] { read_molecule(huge); }, "no molecule could be read");
  const std::string beyond_file = write_temp("long-count.xyz", "1000000\ntitle\nH 0 0 0\n");
  expect_error_containing([&] { read_molecule(beyond_file); }, "no molecule could be read");
}

TEST(ReadMolecule, IsotopeChoicesAreParsedStrictlyAndBounded) {
  const IsotopeChoice choice = parse_isotope_choice("12=13");
  EXPECT_EQ(choice.atom_number, 12);
  EXPECT_EQ(choice.mass_number, 13);
  for (const char* bad : {"", "=", "2=", "=2", "2=2=2", "-1=2", "2=+2", "a=2", "2=2x", "2 2", "0x2=2"})
    expect_error_containing([&] { parse_isotope_choice(bad); }, "N=A");
  expect_error_containing([] { parse_isotope_choice("99999999999=2"); }, "out of range");
  // A very long value is refused by its length, not parsed (a recursive matcher
  // overflowed the stack on 100,000 digits).
  expect_error_containing([] { parse_isotope_choice(std::string(100000, '7') + "=2"); }, "longer than");
}

TEST(ReadMolecule, TwoIsotopeChoicesForOneAtomAreRefused) {
  ReadOptions options;
  options.isotopes = {parse_isotope_choice("2=2"), parse_isotope_choice("4=2"), parse_isotope_choice("2=3")};
  expect_error_containing([&] { read_molecule(data_dir + "acetaldehyde.xyz", options); },
                          "atom 2 is given two isotope choices");
}

}  // namespace
}  // namespace overtone
