// JSON of the anharmonic and families stages: the fields the documentation promises, in
// the numbering of the modes table, consistent with the results they render.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <string>

#include "molecule/read_molecule.hpp"
#include "pipeline/analysis.hpp"
#include "potential/make_potential.hpp"
#include "report/anharmonic_json.hpp"
#include "report/families_json.hpp"

namespace overtone {
namespace {

const std::string source_dir = OVERTONE_SOURCE_DIR;

// JSON stores doubles exactly as printed by nlohmann (round trip); sums of three
// matrices agree to round-off.
constexpr double round_off_cm1 = 1e-9;

struct Analysed {
  std::unique_ptr<Potential> potential;
  AnalysisResult analysis;
};

Analysed run(const std::string& name) {
  const Molecule molecule = read_molecule(source_dir + "/molecules/" + name + ".xyz").molecule;
  Analysed result;
  result.potential = make_potential(source_dir + "/potentials/" + name + ".toml", molecule);
  result.analysis = analyze_molecule(molecule, *result.potential);
  return result;
}

TEST(StageJson, AnharmonicDocumentOfCarbonDioxide) {
  const Analysed co2 = run("carbon-dioxide");
  const AnharmonicResult anharmonic = analyze_anharmonic(co2.analysis, *co2.potential);
  const nlohmann::json document = anharmonic_to_json(co2.analysis, anharmonic);

  const auto& constants = document.at("force_constants");
  EXPECT_EQ(constants.at("cubic").size(), anharmonic.force_constants.constants.cubic_entries(0.0).size());
  EXPECT_EQ(constants.at("quartic").size(), anharmonic.force_constants.constants.quartic_entries(0.0).size());
  for (const auto& entry : constants.at("cubic")) {
    ASSERT_EQ(entry.at("modes").size(), 3u);
    for (const auto& mode : entry.at("modes")) {
      EXPECT_GE(mode.get<int>(), 1);
      EXPECT_LE(mode.get<int>(), 4);
    }
  }
  // Inversion parity: ν2 (modes 2, 3) and ν3 (mode 4) are u, so every nonzero cubic
  // constant holds an even number of them (common practice, no source).
  for (const auto& entry : constants.at("cubic")) {
    int odd_parity_count = 0;
    for (const auto& mode : entry.at("modes")) odd_parity_count += mode.get<int>() >= 2 ? 1 : 0;
    EXPECT_EQ(odd_parity_count % 2, 0) << entry.dump();
  }

  const auto& x = document.at("anharmonicity");
  ASSERT_EQ(x.at("x_cm1").size(), 4u);
  for (std::size_t i = 0; i < 4; ++i)
    for (std::size_t j = 0; j < 4; ++j) {
      EXPECT_NEAR(x["x_cm1"][i][j].get<double>(), x["x_cm1"][j][i].get<double>(), round_off_cm1);
      EXPECT_NEAR(x["x_cm1"][i][j].get<double>(),
                  x["x_vibrational_cm1"][i][j].get<double>() + x["x_coriolis_cm1"][i][j].get<double>(),
                  round_off_cm1);
    }

  ASSERT_EQ(document.at("levels").size(), anharmonic.vpt2.levels.size());
  bool found_corrected_fundamental = false;
  for (const auto& level : document.at("levels")) {
    for (const char* key : {"label", "kind", "quanta", "species", "harmonic_cm1", "anharmonic_cm1",
                            "resonance_corrected_cm1", "ir_active", "raman_active", "partners"})
      EXPECT_TRUE(level.contains(key)) << key;
    ASSERT_EQ(level.at("quanta").size(), 3u);  // ν1, ν2, ν3
    if (level.at("label") == "ν1") {
      EXPECT_EQ(level.at("kind"), "fundamental");
      EXPECT_EQ(level.at("quanta"), nlohmann::json::array({1, 0, 0}));
      found_corrected_fundamental = !level.at("resonance_corrected_cm1").is_null();
      ASSERT_EQ(level.at("partners").size(), 1u);
      EXPECT_EQ(level.at("partners")[0], "2ν2");
      // The Fermi dyad ν1 / 2ν2 (Fermi 1931): the state is a mixture of ν1 and 2ν2, whose
      // components carry their quanta as sparse [ν number, quanta] pairs.
      bool mixes_overtone = false;
      for (const auto& component : level.at("mixing"))
        if (component.at("label") == "2ν2") {
          mixes_overtone = true;
          EXPECT_EQ(component.at("quanta"), nlohmann::json::parse("[[2, 2]]"));
        }
      EXPECT_TRUE(mixes_overtone);
    }
  }
  EXPECT_TRUE(found_corrected_fundamental);

  bool found_dyad = false;
  for (const auto& resonance : document.at("resonances"))
    if (resonance.at("kind") == "overtone-fundamental" &&
        resonance.at("modes") == nlohmann::json::array({2, 1})) {
      found_dyad = true;
      EXPECT_TRUE(resonance.at("symmetry_allowed").get<bool>());
      EXPECT_GT(resonance.at("coupling_cm1").get<double>(), 0.0);
      EXPECT_TRUE(resonance.contains("gap_cm1"));
      EXPECT_TRUE(resonance.contains("criterion_value"));
    }
  EXPECT_TRUE(found_dyad);
}

TEST(StageJson, FamiliesDocumentOfWater) {
  const Analysed water = run("water");
  FamiliesOptions options;
  options.quanta = 1.0;
  const FamiliesResult families = analyze_families(water.analysis, *water.potential, options);
  const nlohmann::json list = families_to_json(water.analysis, families).at("families");
  ASSERT_EQ(list.size(), families.families.size());
  for (std::size_t f = 0; f < list.size(); ++f) {
    const auto& family = list[f];
    for (const char* key : {"mode_numbers", "species", "copies", "description", "subgroup",
                            "resonance_threats", "points", "events", "ladder"})
      EXPECT_TRUE(family.contains(key)) << key;
    const ContinuationResult& backbone = families.families[f].backbone;
    ASSERT_EQ(family.at("points").size(), backbone.points.size());
    ASSERT_FALSE(backbone.points.empty());
    const auto& last = family.at("points").back();
    for (const char* key :
         {"energy_cm1", "frequency_cm1", "period_fs", "action_hbar", "amplitude_angstrom", "floquet_moduli"})
      EXPECT_TRUE(last.contains(key)) << key;
    EXPECT_DOUBLE_EQ(last.at("frequency_cm1").get<double>(), backbone.points.back().frequency_cm1);
    // T = 1/(c ν̃): period in fs from the wavenumber (CODATA c = 2.99792458e10 cm/s).
    EXPECT_NEAR(last.at("period_fs").get<double>() * last.at("frequency_cm1").get<double>() * 2.99792458e-5,
                1.0, 1e-9);
    ASSERT_GE(family.at("ladder").size(), 2u);  // n = 0 (zero-point) and n = 1 at one quantum
    EXPECT_EQ(family.at("ladder")[1].at("n"), 1);
    EXPECT_TRUE(family.at("ladder")[1].contains("transition_cm1"));
    for (const auto& element : family.at("subgroup")) {
      EXPECT_TRUE(element.contains("operation"));
      EXPECT_TRUE(element.contains("phase"));
    }
  }
  // Water's B2 stretch: σv(xz) and C2 map its motion onto itself half a period later
  // (B2 characters −1; common practice, no source).
  // (Born families follow the families from the minimum; find the B2 one by species.)
  const auto found =
      std::find_if(list.begin(), list.end(), [](const auto& f) { return f.at("species") == "B2"; });
  ASSERT_NE(found, list.end());
  const auto& asymmetric = *found;
  EXPECT_TRUE(asymmetric.at("born_from_family").is_null());
  int half_period = 0;
  for (const auto& element : asymmetric.at("subgroup")) half_period += element.at("phase") == "1/2" ? 1 : 0;
  EXPECT_EQ(half_period, 2);
}

}  // namespace
}  // namespace overtone
