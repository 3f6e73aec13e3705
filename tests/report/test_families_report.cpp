// The families' text report, backbone CSVs and their file names, and the ASCII labels of
// the families JSON: named with the ν numbers of the modes table, as --mode takes them.
#include <gtest/gtest.h>

#include <algorithm>
#include <string>

#include "analysed_examples.hpp"
#include "core/error.hpp"
#include "report/document.hpp"
#include "report/families_json.hpp"
#include "report/families_report.hpp"

namespace overtone {
namespace {

// A coarse, quick backbone: one quantum in three steps (the report tests look at names and
// layout, not at the accuracy of the orbits).
FamiliesOptions quick_options() {
  FamiliesOptions options;
  options.quanta = 1.0;
  options.continuation.start_energy_fraction = 0.05;
  options.continuation.max_energy_step_fraction = 0.34;
  options.continuation.max_step = 1.0;
  options.continuation.compute_floquet = false;
  options.continuation.ladder_max_level = 0;
  return options;
}

bool is_ascii(const std::string& text) {
  return std::all_of(text.begin(), text.end(), [](char c) { return static_cast<unsigned char>(c) < 0x80; });
}

TEST(FamiliesReport, ReportAndCsvCoverEveryContinuedFamily) {
  const testing::Analysed water = testing::run_example("water");
  FamiliesOptions options = quick_options();
  options.continuation.compute_floquet = true;
  options.continuation.ladder_max_level = 2;
  const FamiliesResult result = analyze_families(water.analysis, *water.potential, options);
  // Without the labels of the modes table the report falls back to the families' own
  // mode numbers (model systems).
  const std::string report = families_text_report(result);
  for (std::size_t i = 0; i < result.families.size(); ++i) {
    EXPECT_NE(report.find("Family " + std::to_string(i + 1) + " - modes"), std::string::npos);
    const std::string csv = family_points_csv(result, static_cast<int>(i));
    const auto lines = std::count(csv.begin(), csv.end(), '\n');
    EXPECT_EQ(lines, static_cast<long>(result.families[i].backbone.points.size()) + 1);
    EXPECT_EQ(csv.rfind("energy_cm1,frequency_cm1,period_fs,action_hbar,", 0), 0u);
    EXPECT_NE(family_csv_file_name(result, static_cast<int>(i)).find(".csv"), std::string::npos);
  }
  EXPECT_THROW(family_points_csv(result, 99), Error);
  EXPECT_NE(families_summary(result).find("B2"), std::string::npos);
}

TEST(FamiliesReport, CarbonDioxideReportStatesTheModelAndTheFermiRule) {
  const testing::Analysed co2 = testing::run_example("carbon-dioxide");
  FamiliesOptions options = quick_options();
  options.continue_families = false;
  const FamiliesResult result = analyze_families(co2.analysis, *co2.potential, options);
  const std::string report = families_text_report(result, co2.analysis.modes);
  EXPECT_NE(report.find("rotation-vibration coupling is neglected"), std::string::npos);
  // 2ν2 / ν1: allowed for the standing bend, forbidden for the rotating one ([Πu]² =
  // Σg+ + Δg; the rotating motion's second harmonic carries l = ±2: common practice, no
  // source).
  EXPECT_NE(report.find("resonance threat: ν1 (Σg⁺) near 2x this frequency"), std::string::npos) << report;
  EXPECT_NE(report.find("allowed by symmetry"), std::string::npos);
  EXPECT_NE(report.find("forbidden by symmetry"), std::string::npos);
}

TEST(FamiliesReport, CarbonDioxideBendIsNamedNu2AsModeTakesIt) {
  const testing::Analysed co2 = testing::run_example("carbon-dioxide");
  FamiliesOptions options = quick_options();
  options.mode_numbers = mode_numbers_of_fundamentals(co2.analysis, {2});
  const FamiliesResult result = analyze_families(co2.analysis, *co2.potential, options);
  const std::string report = families_text_report(result, co2.analysis.modes);
  EXPECT_EQ(report.find("modes 2,3"), std::string::npos) << report;
  EXPECT_NE(report.find("- ν2 (Πu): "), std::string::npos) << report;
  // The bend (ν2 Πu, textbook numbering) has a standing and a rotating family; both are
  // continued and written as family-NN-nu2.csv.
  const std::vector<OutputFile> files = family_backbone_files(co2.analysis, result);
  ASSERT_EQ(files.size(), 2u);
  for (const OutputFile& file : files) {
    EXPECT_EQ(file.relative_path.rfind("family-0", 0), 0u) << file.relative_path;
    EXPECT_NE(file.relative_path.find("-nu2.csv"), std::string::npos) << file.relative_path;
    EXPECT_EQ(file.relative_path.find("modes"), std::string::npos) << file.relative_path;
  }
}

TEST(FamiliesReport, JsonLabelsAreAscii) {
  const testing::Analysed co2 = testing::run_example("carbon-dioxide");
  FamiliesOptions options = quick_options();
  options.continue_families = false;
  const FamiliesResult result = analyze_families(co2.analysis, *co2.potential, options);
  const nlohmann::json sections = families_to_json(co2.analysis, result);
  ASSERT_EQ(sections.at("families").size(), 4u);  // ν1, ν3, standing and rotating ν2
  bool saw_eightfold_rotation = false;
  for (const auto& family : sections.at("families")) {
    EXPECT_TRUE(is_ascii(family.at("species").get<std::string>())) << family.at("species");
    for (const char* key : {"subgroup", "generators"})
      for (const auto& element : family.at(key)) {
        const std::string operation = element.at("operation").get<std::string>();
        EXPECT_TRUE(is_ascii(operation)) << operation;
        // The linear stand-in D8h's eightfold rotation, typographically "C₈" (docs/symmetry.md).
        saw_eightfold_rotation = saw_eightfold_rotation || operation.rfind("C8", 0) == 0;
      }
    for (const auto& threat : family.at("resonance_threats"))
      EXPECT_TRUE(is_ascii(threat.at("partner_species").get<std::string>()));
  }
  EXPECT_TRUE(saw_eightfold_rotation);
  // The bend's families carry the ν number that --mode takes.
  int bend_families = 0;
  for (const auto& family : sections.at("families"))
    bend_families += family.at("fundamentals") == nlohmann::json::array({2}) ? 1 : 0;
  EXPECT_EQ(bend_families, 2);
}

}  // namespace
}  // namespace overtone
