// The console report: contents, not layout.
#include <gtest/gtest.h>

#include "molecule/read_molecule.hpp"
#include "report/symmetry_report.hpp"

namespace overtone {
namespace {

PointGroupResult detect_file(const std::string& file) {
  return detect_point_group(
      read_molecule(std::string(OVERTONE_SOURCE_DIR) + "/tests/data/symmetry/" + file).molecule);
}

bool contains(const std::string& text, const std::string& part) {
  return text.find(part) != std::string::npos;
}

TEST(SymmetryReport, ShowsGroupTableAndVibrations) {
  const std::string text = format_symmetry_report(detect_file("boron_trifluoride.D3h.xyz"));
  EXPECT_TRUE(contains(text, "Point group D₃h (D3h), order 12")) << text;
  EXPECT_TRUE(contains(text, "Γvib = A₁′ + 2E′ + A₂″")) << text;
  EXPECT_TRUE(contains(text, "IR active: 2E′ + A₂″")) << text;
  EXPECT_TRUE(contains(text, "Raman active: A₁′ + 2E′")) << text;
  EXPECT_TRUE(contains(text, "3σv")) << text;
  EXPECT_TRUE(contains(text, "symmetry-equivalent atoms: {1} {2, 3, 4}")) << text;
}

TEST(SymmetryReport, LinearAndLargeGroups) {
  const std::string co2 = format_symmetry_report(detect_file("carbon_dioxide.Dinfh.xyz"));
  EXPECT_TRUE(contains(co2, "D∞h")) << co2;
  EXPECT_TRUE(contains(co2, "D8h")) << co2;
  EXPECT_TRUE(contains(co2, "Γvib = Σg⁺ + Σu⁺ + Πu")) << co2;
  const std::string c60 = format_symmetry_report(detect_file("buckminsterfullerene.Ih.xyz"));
  EXPECT_TRUE(contains(c60, "120 operations in 10 classes")) << c60;
  EXPECT_TRUE(contains(c60, "IR active: 4T₁u")) << c60;
}

TEST(SymmetryReport, DisplayWidthCountsCodePoints) {
  EXPECT_EQ(display_width("A₁′"), 3u);
  EXPECT_EQ(display_width("Σg⁺"), 3u);
  EXPECT_EQ(display_width("abc"), 3u);
}

}  // namespace
}  // namespace overtone
