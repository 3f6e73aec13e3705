// The line list and text report of the anharmonic stage: documented columns, the
// numbering of the modes table, the carbon dioxide Fermi dyad named as textbooks name it.
#include <fmt/format.h>
#include <gtest/gtest.h>

#include <algorithm>
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

// Counts lines of a text.
std::size_t line_count(const std::string& text) {
  return static_cast<std::size_t>(std::count(text.begin(), text.end(), '\n'));
}

TEST(AnharmonicReport, SummaryListsTheTreatedResonancesAndCountsTheOthers) {
  // Carbon dioxide: the classic Fermi dyad 2ν2 / ν1 (Fermi, Z. Phys. 71, 250 (1931)) is the
  // resonance that passes; the others within the windows are only counted.
  const testing::Analysed co2 = testing::run_example("carbon-dioxide");
  const AnharmonicResult anharmonic = analyze_anharmonic(co2.analysis, *co2.potential);
  const Vpt2Result& vpt2 = anharmonic.vpt2;
  AnharmonicReportOptions options;
  options.set_numbers = anharmonic.set_numbers;
  options.full_lists_note = "here.txt";
  const std::string summary = anharmonic_report(anharmonic.force_constants, vpt2, options);
  const auto treated = std::count_if(vpt2.resonances.begin(), vpt2.resonances.end(),
                                     [](const Resonance& r) { return r.flagged; });
  ASSERT_GE(treated, 1);
  EXPECT_NE(summary.find("2ν2 / ν1"), std::string::npos) << summary;
  EXPECT_NE(
      summary.find(fmt::format("Resonances treated: {} of {} candidates", treated, vpt2.resonances.size())),
      std::string::npos)
      << summary;
  EXPECT_NE(summary.find(fmt::format("candidates that did not pass: {}", vpt2.resonances.size() - treated)),
            std::string::npos)
      << summary;
  // The dyad partner 2ν2 is listed under ν1 (indented), and the summary says where the rest is.
  EXPECT_NE(summary.find("\n      2ν2"), std::string::npos) << summary;
  EXPECT_NE(summary.find(fmt::format("every level ({}): here.txt", vpt2.levels.size())), std::string::npos);
  EXPECT_EQ(summary.find("Anharmonicity constants x"), std::string::npos);

  options.detail = ReportDetail::full;
  const std::string full = anharmonic_report(anharmonic.force_constants, vpt2, options);
  EXPECT_NE(full.find("Anharmonicity constants x"), std::string::npos);
  EXPECT_GE(line_count(full), line_count(summary));
  for (const Resonance& r : vpt2.resonances)  // every candidate, treated or not
    EXPECT_NE(full.find(resonance_label(r, options.set_numbers)), std::string::npos);
}

TEST(AnharmonicReport, SummaryShiftsFollowTheClosedFormOfTheFundamentals) {
  // ν_i − ω_i = 2x_ii + ½ Σ_{j≠i} x_ij (Mills 1972; the VPT2 term values of vpt2.hpp) for the
  // three nondegenerate fundamentals of water, none of them in a polyad.
  const testing::Analysed water = testing::run_example("water");
  const AnharmonicResult anharmonic = analyze_anharmonic(water.analysis, *water.potential);
  const Vpt2Result& vpt2 = anharmonic.vpt2;
  AnharmonicReportOptions options;
  options.set_numbers = anharmonic.set_numbers;
  const std::string summary = anharmonic_report(anharmonic.force_constants, vpt2, options);
  const Eigen::MatrixXd& x = vpt2.x_cm1;
  for (std::size_t s = 0; s < vpt2.sets.size(); ++s) {
    const int i = vpt2.sets[s].modes.front();
    double shift = 2.0 * x(i, i);
    for (int j = 0; j < x.rows(); ++j)
      if (j != i) shift += 0.5 * x(i, j);
    const std::string row_start = fmt::format("  ν{:<5}", options.set_numbers[s]);
    const auto row = summary.find(row_start);
    ASSERT_NE(row, std::string::npos) << summary;
    const std::string line = summary.substr(row, summary.find('\n', row) - row);
    EXPECT_NE(line.find(fmt::format("{:+.2f}", shift)), std::string::npos) << line;
    EXPECT_NE(line.find(fmt::format("{:.3f}", x(i, i))), std::string::npos) << line;
  }
}

TEST(AnharmonicReport, ResonanceKindsHaveSelfDescribingCodes) {
  EXPECT_EQ(to_string(ResonanceKind::fermi_1), "overtone-fundamental");
  EXPECT_EQ(to_string(ResonanceKind::fermi_2), "combination-fundamental");
  EXPECT_EQ(to_string(ResonanceKind::darling_dennison), "overtone-overtone");
}

}  // namespace
}  // namespace overtone
