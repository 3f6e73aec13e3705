// Conformers: the analysis says when the structure it analysed is a local minimum above
// an easily found conformer, and the conformer search analyses the lowest one instead.
#include <gtest/gtest.h>

#include <cmath>
#include <filesystem>
#include <set>
#include <string>

#include "molecule/read_molecule.hpp"
#include "pipeline/analysis.hpp"
#include "potential/make_potential.hpp"

namespace overtone {
namespace {

const std::string source_dir = OVERTONE_SOURCE_DIR;
// Debian's chemical-structures-data package (tools/setup installs it).
const std::string cyclohexane_file = "/usr/share/chemical-structures/alkanes/cyclohexane.cml";

// Chair below twist-boat cyclohexane by about 5.5 kcal/mol (gas-phase experiment,
// Squillacote, Sheridan, Chapman and Anet, J. Am. Chem. Soc. 97, 3244 (1975); from
// memory). A general force field reproduces conformer energies to about a kcal/mol
// (common practice, no source).
constexpr double chair_below_twist_boat_kcal_mol = 5.5;
constexpr double force_field_conformer_tolerance_kcal_mol = 1.5;
// Anti below gauche butane by about 0.67 kcal/mol (gas-phase experiment, from memory).
constexpr double anti_below_gauche_kcal_mol = 0.67;
constexpr double butane_tolerance_kcal_mol = 0.5;

bool has_warning_containing(const AnalysisResult& analysis, const std::string& fragment) {
  for (const auto& warning : analysis.warnings)
    if (warning.find(fragment) != std::string::npos) return true;
  return false;
}

double dihedral_rad(const Molecule& m, int a, int b, int c, int d) {
  const Eigen::Vector3d b1 = m.atoms[b].position_angstrom - m.atoms[a].position_angstrom;
  const Eigen::Vector3d b2 = m.atoms[c].position_angstrom - m.atoms[b].position_angstrom;
  const Eigen::Vector3d b3 = m.atoms[d].position_angstrom - m.atoms[c].position_angstrom;
  const Eigen::Vector3d n1 = b1.cross(b2), n2 = b2.cross(b3);
  return std::atan2(b2.normalized().dot(n1.cross(n2)), n1.dot(n2));
}

// Butane (built from SMILES) with its C1–C2–C3–C4 dihedral set: every atom on the C3
// side of the C2–C3 bond turns about it.
Molecule butane_with_dihedral(double degrees) {
  ReadOptions options;
  options.input_is_smiles = true;
  Molecule butane = read_molecule("CCCC", options).molecule;
  std::set<int> side = {2};
  for (bool grown = true; grown;) {
    grown = false;
    for (const Bond& bond : butane.bonds)
      for (const auto& [from, to] : {std::pair{bond.first, bond.second}, std::pair{bond.second, bond.first}})
        if (side.count(from) && to != 1 && !side.count(to)) grown = side.insert(to).second;
  }
  const Eigen::Vector3d origin = butane.atoms[2].position_angstrom;
  const Eigen::Vector3d axis = (origin - butane.atoms[1].position_angstrom).normalized();
  const double turn_rad = degrees * M_PI / 180.0 - dihedral_rad(butane, 0, 1, 2, 3);
  const Eigen::Matrix3d turn = Eigen::AngleAxisd(turn_rad, axis).toRotationMatrix();
  for (const int atom : side)
    butane.atoms[atom].position_angstrom = origin + turn * (butane.atoms[atom].position_angstrom - origin);
  return butane;
}

TEST(Conformers, TwistBoatCyclohexaneIsNotedAndTheSearchAnalysesTheChair) {
  if (!std::filesystem::exists(cyclohexane_file))
    GTEST_SKIP() << cyclohexane_file << " is missing (Debian package chemical-structures-data)";
  const Molecule molecule = read_molecule(cyclohexane_file).molecule;
  const auto potential = make_potential("MMFF94", molecule);

  const AnalysisResult twist_boat = analyze_molecule(molecule, *potential);
  EXPECT_TRUE(twist_boat.optimization.converged()) << twist_boat.optimization.message;
  EXPECT_EQ(twist_boat.point_group.group.name, "D2");
  EXPECT_TRUE(twist_boat.conformers.searched);
  EXPECT_FALSE(twist_boat.conformers.analysed_lowest_found);
  EXPECT_TRUE(has_warning_containing(twist_boat, "local minimum"));
  EXPECT_NEAR(twist_boat.conformers.analysed_above_best_kcal_mol, chair_below_twist_boat_kcal_mol,
              force_field_conformer_tolerance_kcal_mol);

  AnalysisOptions search;
  search.conformers = ConformerSearch::analyse_best;
  const AnalysisResult chair = analyze_molecule(molecule, *potential, search);
  EXPECT_TRUE(chair.optimization.converged()) << chair.optimization.message;
  EXPECT_EQ(chair.point_group.group.name, "D3d");
  EXPECT_GT(chair.harmonic.frequencies_cm1.minCoeff(), 0.0);
  EXPECT_NEAR(twist_boat.optimization.energy_kcal_mol - chair.optimization.energy_kcal_mol,
              chair_below_twist_boat_kcal_mol, force_field_conformer_tolerance_kcal_mol);
  EXPECT_FALSE(has_warning_containing(chair, "local minimum"));
}

TEST(Conformers, GaucheButaneIsNotedAndTheSearchAnalysesAnti) {
  const Molecule molecule = butane_with_dihedral(65.0);
  const auto potential = make_potential("MMFF94", molecule);
  const AnalysisResult gauche = analyze_molecule(molecule, *potential);
  EXPECT_EQ(gauche.point_group.group.name, "C2");
  EXPECT_TRUE(has_warning_containing(gauche, "local minimum"));
  EXPECT_NEAR(gauche.conformers.analysed_above_best_kcal_mol, anti_below_gauche_kcal_mol,
              butane_tolerance_kcal_mol);

  AnalysisOptions search;
  search.conformers = ConformerSearch::analyse_best;
  const AnalysisResult anti = analyze_molecule(molecule, *potential, search);
  EXPECT_EQ(anti.point_group.group.name, "C2h");
  EXPECT_NEAR(gauche.optimization.energy_kcal_mol - anti.optimization.energy_kcal_mol,
              anti_below_gauche_kcal_mol, butane_tolerance_kcal_mol);
}

TEST(Conformers, LowestConformerGetsNoNote) {
  const Molecule butane = butane_with_dihedral(180.0);
  const auto potential = make_potential("MMFF94", butane);
  const AnalysisResult anti = analyze_molecule(butane, *potential);
  EXPECT_EQ(anti.point_group.group.name, "C2h");
  EXPECT_TRUE(anti.conformers.searched);
  EXPECT_GT(anti.conformers.relaxed, 0);
  EXPECT_TRUE(anti.conformers.analysed_lowest_found);
  EXPECT_FALSE(has_warning_containing(anti, "local minimum"));
}

TEST(Conformers, ValenceForceFieldsAreNotSearched) {
  // A valence force field describes one well: far from it its numbers mean nothing.
  const Molecule water = read_molecule(source_dir + "/molecules/water.xyz").molecule;
  const auto potential = make_potential(source_dir + "/potentials/water.toml", water);
  EXPECT_FALSE(analyze_molecule(water, *potential).conformers.searched);
}

}  // namespace
}  // namespace overtone
