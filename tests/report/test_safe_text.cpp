// Titles from input files may hold any bytes: the JSON document stays valid UTF-8 and
// parses back, and an exported Taylor expansion reads back with the same constants.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <map>
#include <string>
#include <vector>

#include "analysed_examples.hpp"
#include "anharmonic/taylor_export.hpp"
#include "core/text.hpp"
#include "potential/taylor_expansion_potential.hpp"
#include "report/document.hpp"

namespace overtone {
namespace {

// Titles a file could carry: Latin-1 bytes, control characters, quotes, backslashes,
// newlines, and text that would be TOML keys if it were not escaped.
constexpr char control_title[] = "bell\x07 nul\0 esc\x1B[2J del\x7F";  // NUL inside

const std::vector<std::string> hostile_titles = {
    "eau liquide \xE9t\xE9 \xB0"
    "C",
    std::string(control_title, sizeof control_title - 1),
    "a \"quoted\" \\back\\slash\\",
    "line one\nline two\r\ncoordinates = \"cartesian\"\n[units]\nenergy = \"hartree\"",
    "\xC3\x28 broken \xF0\x9F\x98 tail \xE2\x82",
};

// Written with 17 significant digits in cm⁻¹ and read back into kcal/mol: one rounding of
// the unit factor each way.
constexpr double round_trip_relative = 1e-14;

// Derivatives keyed by their ascending indices (the file may list them in any order).
std::map<std::vector<int>, double> by_indices(const std::vector<ExpansionDerivative>& derivatives) {
  std::map<std::vector<int>, double> values;
  for (const ExpansionDerivative& derivative : derivatives) {
    std::vector<int> indices = derivative.indices;
    std::sort(indices.begin(), indices.end());
    values[indices] = derivative.value;
  }
  return values;
}

TEST(SafeText, HostileTitlesGiveValidJson) {
  for (const std::string& title : hostile_titles) {
    const testing::Analysed water = testing::run_example("water", &title);
    RunResults results;
    results.analysis = &water.analysis;
    const std::string text = json_text(analysis_document(results));
    nlohmann::json parsed;
    ASSERT_NO_THROW(parsed = nlohmann::json::parse(text)) << text.substr(0, 200);
    EXPECT_EQ(parsed.at("molecule").at("title").get<std::string>(), valid_utf8(title));
  }
}

TEST(SafeText, HostileTitlesSurviveTheTaylorExportRoundTrip) {
  const testing::Analysed water = testing::run_example("water");
  const AnharmonicResult anharmonic = analyze_anharmonic(water.analysis, *water.potential);
  for (const std::string& title : hostile_titles) {
    AnalysisResult analysis = water.analysis;
    analysis.molecule.title = title;
    const std::string text = taylor_expansion_text(analysis, anharmonic);
    TaylorExpansionData reread;
    ASSERT_NO_THROW(reread = parse_taylor_expansion(text, "exported")) << text.substr(0, 400);
    EXPECT_EQ(reread.title.rfind(valid_utf8(title), 0), 0u) << reread.title;
    EXPECT_EQ(reread.coordinates, ExpansionCoordinates::normal);

    const TaylorExpansionData original = taylor_expansion_from_force_constants(
        anharmonic.force_constants, anharmonic.harmonic, analysis.molecule, ExpansionCoordinates::normal);
    ASSERT_EQ(reread.frequencies_cm1.size(), original.frequencies_cm1.size());
    for (Eigen::Index k = 0; k < original.frequencies_cm1.size(); ++k)
      EXPECT_NEAR(reread.frequencies_cm1[k], original.frequencies_cm1[k],
                  round_trip_relative * original.frequencies_cm1[k]);
    const auto reread_values = by_indices(reread.derivatives);
    const auto original_values = by_indices(original.derivatives);
    double largest = 0.0;
    for (const auto& [indices, value] : original_values) largest = std::max(largest, std::abs(value));
    for (const auto& [indices, value] : original_values) {
      const auto found = reread_values.find(indices);
      // The writer leaves out constants below 1e-12 of the largest (TaylorWriteOptions).
      const double read = found == reread_values.end() ? 0.0 : found->second;
      EXPECT_NEAR(read, value, round_trip_relative * std::abs(value) + 1e-12 * largest);
    }
    EXPECT_LE(reread_values.size(), original_values.size());
  }
}

}  // namespace
}  // namespace overtone
