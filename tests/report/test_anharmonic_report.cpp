// The line list and text report of the anharmonic stage: documented columns, the
// numbering of the modes table, the carbon dioxide Fermi dyad named as textbooks name it.
#include <gtest/gtest.h>

#include <sstream>
#include <string>

#include "analysed_examples.hpp"
#include "report/anharmonic_report.hpp"

namespace overtone {
namespace {

TEST(AnharmonicReport, LineListHasOneRowPerLevelWithDocumentedColumns) {
  const testing::Analysed co2 = testing::run_example("carbon-dioxide");
  const AnharmonicResult anharmonic = analyze_anharmonic(co2.analysis, *co2.potential);
  const Vpt2Result& vpt2 = anharmonic.vpt2;
  // Textbook numbering (Herzberg 1945, from memory): ν1 Σg+ (set 1), ν2 Πu (set 0), ν3 Σu+;
  // the pipeline's numbering and the numbering by first appearance in that mode order agree.
  EXPECT_EQ(anharmonic.set_numbers, set_numbers_from_mode_order(vpt2, {2, 0, 1, 3}));
  AnharmonicReportOptions options;
  options.set_numbers = anharmonic.set_numbers;
  EXPECT_EQ(level_label({0, 1, 0}, options.set_numbers, true), "v1");
  EXPECT_EQ(level_label({2, 0, 1}, options.set_numbers), "2ν2+ν3");

  const std::string csv = line_list_csv(vpt2, options);
  std::istringstream lines(csv);
  std::string header;
  std::getline(lines, header);
  EXPECT_EQ(
      header,
      "label,kind,quanta,sublevel,degeneracy,species,ir_active,raman_active,harmonic_cm1,anharmonic_cm1,"
      "resonance_corrected_cm1,best_estimate_cm1,polyad,partners,mixing,ir_intensity_km_per_mol,"
      "raman_activity_a4_per_u");
  std::size_t rows = 0;
  bool saw_dyad_row = false;
  for (std::string line; std::getline(lines, line);) {
    ++rows;
    if (line.rfind("2ν2,overtone,0 2 0,", 0) == 0 && line.find("Sigma_g+") != std::string::npos) {
      saw_dyad_row = true;
      EXPECT_NE(line.find(",ν1,"), std::string::npos) << line;  // partner column
    }
  }
  EXPECT_EQ(rows, vpt2.levels.size());
  EXPECT_TRUE(saw_dyad_row) << csv;
  const std::string report = anharmonic_report(anharmonic.force_constants, vpt2, options);
  EXPECT_NE(report.find("overtone-fundamental"), std::string::npos);
  EXPECT_NE(report.find("2ν2 / ν1"), std::string::npos);
}

TEST(AnharmonicReport, ResonanceKindsHaveSelfDescribingCodes) {
  EXPECT_EQ(to_string(ResonanceKind::fermi_1), "overtone-fundamental");
  EXPECT_EQ(to_string(ResonanceKind::fermi_2), "combination-fundamental");
  EXPECT_EQ(to_string(ResonanceKind::darling_dennison), "overtone-overtone");
}

}  // namespace
}  // namespace overtone
