// The main job as one call: symmetry-aware numbering and species of the shipped
// molecules, exact degeneracies, and a consistent fall-back without symmetry.
#include <gtest/gtest.h>

#include <string>
#include <vector>

#include "molecule/read_molecule.hpp"
#include "pipeline/analysis.hpp"
#include "potential/make_potential.hpp"

namespace overtone {
namespace {

const std::string source_dir = OVERTONE_SOURCE_DIR;

// Degenerate partners come from one symmetrized Hessian: equal to round-off.
constexpr double degeneracy_tolerance_cm1 = 1e-6;

AnalysisResult run(const std::string& name, const std::string& potential_file, AnalysisOptions options = {}) {
  const Molecule molecule = read_molecule(source_dir + "/molecules/" + name + ".xyz").molecule;
  const auto potential = make_potential(source_dir + "/potentials/" + potential_file, molecule);
  return analyze_molecule(molecule, *potential, options);
}

std::vector<std::string> species_by_fundamental(const AnalysisResult& analysis) {
  std::vector<std::string> species;
  for (const auto& mode : analysis.modes)
    if (static_cast<int>(species.size()) < mode.fundamental) species.push_back(mode.species);
  return species;
}

TEST(Analysis, CarbonDioxideIsNumberedTheCustomaryWay) {
  // ν1 symmetric stretch Σg+, ν2 bend Πu, ν3 antisymmetric stretch Σu+ (Herzberg 1945,
  // the customary labels of CO2; from memory).
  const AnalysisResult co2 = run("carbon-dioxide", "carbon-dioxide.toml");
  EXPECT_EQ(co2.point_group.group.name, "Dinfh");
  EXPECT_EQ(species_by_fundamental(co2), (std::vector<std::string>{"Sigma_g+", "Pi_u", "Sigma_u+"}));
  // Rule of mutual exclusion (centrosymmetric molecule).
  for (const auto& mode : co2.modes) EXPECT_NE(mode.ir_active, mode.raman_active) << mode.species;
}

TEST(Analysis, MethaneSpeciesAndExactDegeneracy) {
  // CH4: A1 + E + 2T2, ν1 A1, ν2 E, ν3 T2 (C–H stretch), ν4 T2 (Herzberg 1945, from memory).
  const AnalysisResult methane = run("methane", "methane.toml");
  EXPECT_EQ(methane.point_group.group.name, "Td");
  EXPECT_EQ(species_by_fundamental(methane), (std::vector<std::string>{"A1", "E", "T2", "T2"}));
  for (const auto& mode : methane.modes) {
    for (const auto& partner : methane.modes)
      if (partner.degenerate_set == mode.degenerate_set) {
        EXPECT_NEAR(methane.harmonic.frequencies_cm1[partner.harmonic_index],
                    methane.harmonic.frequencies_cm1[mode.harmonic_index], degeneracy_tolerance_cm1);
      }
  }
  EXPECT_GT(methane.harmonic.frequencies_cm1[methane.modes[3].harmonic_index],
            methane.harmonic.frequencies_cm1[methane.modes[6].harmonic_index]);  // ν3 above ν4
}

TEST(Analysis, AmmoniaAndWaterFollowTheTextbookOrder) {
  // NH3: 2A1 + 2E; H2O: 2A1 + B2 (Herzberg 1945, from memory).
  EXPECT_EQ(species_by_fundamental(run("ammonia", "ammonia.toml")),
            (std::vector<std::string>{"A1", "A1", "E", "E"}));
  EXPECT_EQ(species_by_fundamental(run("water", "water.toml")), (std::vector<std::string>{"A1", "A1", "B2"}));
}

TEST(Analysis, WithoutSymmetryModesAreNumberedByDescendingWavenumber) {
  AnalysisOptions options;
  options.use_symmetry = false;
  const AnalysisResult water = run("water", "water.toml", options);
  ASSERT_EQ(water.modes.size(), 3u);
  for (std::size_t k = 1; k < water.modes.size(); ++k)
    EXPECT_GT(water.harmonic.frequencies_cm1[water.modes[k - 1].harmonic_index],
              water.harmonic.frequencies_cm1[water.modes[k].harmonic_index]);
  EXPECT_TRUE(water.modes[0].species.empty());
}

}  // namespace
}  // namespace overtone
