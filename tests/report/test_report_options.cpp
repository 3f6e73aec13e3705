// The report stage keeps the stage contract: its Options structs accept their defaults
// and refuse a value out of range before any text is written, naming the field.
#include <gtest/gtest.h>

#include "../support/option_refusal.hpp"
#include "report/anharmonic_report.hpp"
#include "report/document.hpp"
#include "report/html_report.hpp"
#include "report/symmetry_report.hpp"

namespace overtone {
namespace {

using testing_support::expect_refused_naming;
using testing_support::refusal_of;

TEST(ReportOptions, DefaultsAreValid) {
  EXPECT_EQ(refusal_of(SymmetryReportOptions{}), "");
  EXPECT_EQ(refusal_of(HtmlReportOptions{}), "");
  EXPECT_EQ(refusal_of(AnharmonicReportOptions{}), "");
  EXPECT_EQ(refusal_of(TextReportOptions{}), "");
}

TEST(ReportOptions, OutOfRangeValuesAreRefusedByName) {
  SymmetryReportOptions negative_count;
  negative_count.max_operations_listed = -1;
  expect_refused_naming(negative_count, "max_operations_listed");
  HtmlReportOptions one_frame;
  one_frame.mode_frames = 1;
  expect_refused_naming(one_frame, "mode_frames");
  // The band limits of a --observed file (parse_observed_csv) hold for a spectrum built in code.
  HtmlReportOptions negative_band;
  negative_band.observed = ObservedSpectrum{"in code", {{-5.0, std::nullopt}}};
  expect_refused_naming(negative_band, "wavenumber_cm1");
  AnharmonicReportOptions zero_number;
  zero_number.set_numbers = {1, 0};  // ν numbers start at 1
  expect_refused_naming(zero_number, "set_numbers");
  TextReportOptions unknown_detail;
  unknown_detail.detail = static_cast<ReportDetail>(7);
  expect_refused_naming(unknown_detail, "detail");
}

}  // namespace
}  // namespace overtone
