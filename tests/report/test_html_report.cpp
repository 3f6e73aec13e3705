// The HTML report's C++ side: the measured-spectrum CSV, the mode and orbit animations
// (checked against the closed form of the harmonic oscillator) and the page's inlining.
#include <gtest/gtest.h>

#include <cmath>
#include <sstream>
#include <string>
#include <vector>

#include "analysed_examples.hpp"
#include "core/error.hpp"
#include "core/units.hpp"
#include "report/document.hpp"
#include "report/html_report.hpp"

namespace overtone {
namespace {

using nlohmann::json;

// The XYZ files print 5 decimals (1e-5 Å); against a turning point of ~0.1 Å that is a
// relative error of 1e-4 in Q, 2e-4 in the energy ½ω²Q².
constexpr double animation_energy_tolerance = 1e-3;
constexpr double coordinate_rounding_angstrom = 1e-5;
// The page keeps 8 significant digits of the document's numbers: half a unit of the last is
// at most 5e-8 relative.
constexpr double page_number_relative_tolerance = 1e-7;

std::string error_of(const std::string& text) {
  try {
    parse_observed_csv(text, "bands.csv");
  } catch (const Error& error) {
    return error.what();
  }
  return "";
}

TEST(ObservedCsv, ColumnsInAnyOrderCommentsAndUnknownIntensity) {
  const ObservedSpectrum observed = parse_observed_csv(
      "# measured in a 10 cm cell\nassignment,intensity,wavenumber_cm1\n\nnu2,1.5,1594.7\nnu1,,3657.1\r\n",
      "bands.csv");
  ASSERT_EQ(observed.bands.size(), 2U);
  EXPECT_DOUBLE_EQ(observed.bands[0].wavenumber_cm1, 1594.7);
  EXPECT_DOUBLE_EQ(observed.bands[0].intensity.value(), 1.5);
  EXPECT_FALSE(observed.bands[1].intensity.has_value());
  EXPECT_EQ(observed.source, "bands.csv");
  const ObservedSpectrum positions = parse_observed_csv("wavenumber_cm1\n1000\n", "list.csv");
  EXPECT_FALSE(positions.bands[0].intensity.has_value());
  // The band lists of `overtone assign` name the column relative_intensity.
  const ObservedSpectrum assign_list =
      parse_observed_csv("wavenumber_cm1,relative_intensity,technique\n1000,0.5,ir\n", "assign.csv");
  EXPECT_DOUBLE_EQ(assign_list.bands[0].intensity.value(), 0.5);
}

TEST(ObservedCsv, BadInputNamesTheLineAndWhatWasExpected) {
  EXPECT_NE(error_of("position,intensity\n1000,1\n")
                .find("line 1: expected a header with the column wavenumber_cm1"),
            std::string::npos);
  EXPECT_NE(error_of("wavenumber_cm1,intensity\n1000,1\nabc,2\n")
                .find("line 3: expected a number in column "
                      "wavenumber_cm1, found 'abc'"),
            std::string::npos);
  EXPECT_NE(error_of("wavenumber_cm1\n-5\n").find("line 2: expected a wavenumber in (0, 100000] cm-1"),
            std::string::npos);
  EXPECT_NE(error_of("wavenumber_cm1\n200000\n").find("line 2"), std::string::npos);
  EXPECT_NE(error_of("wavenumber_cm1,intensity\n1000,nan\n").find("expected a finite intensity"),
            std::string::npos);
  EXPECT_NE(error_of("wavenumber_cm1,intensity\n1000\n").find("expected at least 2 cells, found 1"),
            std::string::npos);
  EXPECT_NE(error_of("wavenumber_cm1\n").find("expected at least one data row"), std::string::npos);
  EXPECT_NE(error_of("").find("found no line"), std::string::npos);
  EXPECT_NE(error_of("wavenumber_cm1\n1000 cm-1\n").find("expected a number"), std::string::npos);
}

json water_document(const std::string* title = nullptr) {
  const testing::Analysed water = testing::run_example("water", title);
  RunResults results;
  results.analysis = &water.analysis;
  return analysis_document(results);
}

std::vector<std::vector<double>> xyz_frames(const std::string& text) {
  std::istringstream in(text);
  std::vector<std::vector<double>> frames;
  std::string line;
  while (std::getline(in, line)) {
    const int atoms = std::stoi(line);
    std::getline(in, line);  // comment
    std::vector<double> frame;
    for (int a = 0; a < atoms; ++a) {
      std::getline(in, line);
      std::istringstream cells(line);
      std::string element;
      double x = 0, y = 0, z = 0;
      cells >> element >> x >> y >> z;
      frame.insert(frame.end(), {x, y, z});
    }
    frames.push_back(frame);
  }
  return frames;
}

// Normal coordinate (√Da·Å) of a displaced frame: Q = Σ_a √m_a L_a·Δx_a.
double normal_coordinate(const json& document, const json& mode, const std::vector<double>& frame) {
  double q = 0.0;
  for (std::size_t a = 0; a < document["atoms"].size(); ++a) {
    const json& atom = document["atoms"][a];
    for (std::size_t k = 0; k < 3; ++k)
      q += std::sqrt(atom["mass_da"].get<double>()) * mode["mass_weighted_vector"][a][k].get<double>() *
           (frame[3 * a + k] - atom["position_angstrom"][k].get<double>());
  }
  return q;
}

TEST(ModeAnimation, TurningPointOfTheFirstLevelAndOnePeriod) {
  const json document = water_document();
  constexpr int frames = 20;
  for (std::size_t k = 0; k < document["modes"].size(); ++k) {
    const json& mode = document["modes"][k];
    const std::vector<std::vector<double>> xyz = xyz_frames(mode_animation_xyz(document, k, frames));
    ASSERT_EQ(xyz.size(), static_cast<std::size_t>(frames));
    // Closed form of the harmonic oscillator: the v = 1 level E = (3/2)ħω has its classical
    // turning point where ½ω²Q² = E; the animation reaches it a quarter period in.
    const double omega = 2.0 * units::pi * units::speed_of_light_m_per_s *
                         mode["frequency_cm1"].get<double>() / units::centimetre_m;
    const double q_si = normal_coordinate(document, mode, xyz[frames / 4]) *
                        std::sqrt(units::atomic_mass_constant_kg) * units::angstrom_m;
    EXPECT_NEAR(0.5 * omega * omega * q_si * q_si / (1.5 * units::hbar_j_s * omega), 1.0,
                animation_energy_tolerance);
    // One period: the start and the half period at equilibrium, frame F−j mirrors frame j,
    // so that the frame after the last is the first again.
    for (int j = 0; j < frames; ++j) {
      const double q = normal_coordinate(document, mode, xyz[static_cast<std::size_t>(j)]);
      const double mirrored =
          normal_coordinate(document, mode, xyz[static_cast<std::size_t>((frames - j) % frames)]);
      EXPECT_NEAR(q, -mirrored, 10 * coordinate_rounding_angstrom) << "mode " << k << " frame " << j;
    }
    EXPECT_NEAR(normal_coordinate(document, mode, xyz[0]), 0.0, 10 * coordinate_rounding_angstrom);
    EXPECT_NEAR(normal_coordinate(document, mode, xyz[frames / 2]), 0.0, 10 * coordinate_rounding_angstrom);
  }
  EXPECT_THROW(mode_animation_xyz(document, document["modes"].size(), frames), Error);
  EXPECT_THROW(mode_animation_xyz(document, 0, 1), Error);
}

TEST(FamilyAnimation, FramesOfTheDocumentInOrder) {
  json document = water_document();
  json frame_a = json::array();
  json frame_b = json::array();
  for (const json& atom : document["atoms"])
    for (std::size_t k = 0; k < 3; ++k) {
      frame_a.push_back(atom["position_angstrom"][k].get<double>());
      frame_b.push_back(atom["position_angstrom"][k].get<double>() + 0.01);
    }
  document["family_orbits"] = json::array({{{"family", 2},
                                            {"energy_cm1", 3000.0},
                                            {"frequency_cm1", 3700.0},
                                            {"frames_angstrom", {frame_a, frame_b}}}});
  const std::vector<std::vector<double>> frames = xyz_frames(family_animation_xyz(document, 2));
  ASSERT_EQ(frames.size(), 2U);
  EXPECT_NEAR(frames[1][0] - frames[0][0], 0.01, coordinate_rounding_angstrom);
  EXPECT_TRUE(family_animation_xyz(document, 1).empty());
  document["family_orbits"][0]["frames_angstrom"][0].erase(0);
  EXPECT_THROW(family_animation_xyz(document, 2), Error);
}

std::size_t occurrences(const std::string& text, const std::string& what) {
  std::size_t count = 0;
  for (std::size_t at = text.find(what); at != std::string::npos; at = text.find(what, at + 1)) ++count;
  return count;
}

TEST(HtmlReport, EverythingInlinedAndTheDocumentIntact) {
  const std::string hostile = "water </script><script>alert(1)</script> <!--";
  const json document = water_document(&hostile);
  HtmlReportOptions options;
  options.observed = parse_observed_csv("wavenumber_cm1\n1595\n", "</script>.csv");
  const std::string html = html_report(document, options);
  // Data, three libraries and the page script; a title or file name never closes one.
  EXPECT_EQ(occurrences(html, "<script"), 5U);
  EXPECT_EQ(occurrences(html, "</script>"), 5U);
  EXPECT_EQ(occurrences(html, "<script src"), 0U);  // nothing loaded from elsewhere
  EXPECT_EQ(occurrences(html, "<link"), 0U);
  const std::string open = "<script type=\"application/json\" id=\"overtone-data\">";
  const std::size_t start = html.find(open) + open.size();
  const json page = json::parse(html.substr(start, html.find("</script>", start) - start));
  EXPECT_EQ(page["molecule"]["title"], hostile);
  ASSERT_EQ(page["modes"].size(), document["modes"].size());
  for (std::size_t k = 0; k < page["modes"].size(); ++k)
    EXPECT_NEAR(
        page["modes"][k]["frequency_cm1"].get<double>() / document["modes"][k]["frequency_cm1"].get<double>(),
        1.0, page_number_relative_tolerance);
  EXPECT_EQ(page["page"]["observed"]["source"], "</script>.csv");
  EXPECT_EQ(page["page"]["mode_turning_point_angstrom"].size(), document["modes"].size());
  EXPECT_THROW(html_report(json::object()), Error);
}

TEST(HtmlReport, FilesOfTheOutputFolder) {
  const json document = water_document();
  const std::vector<OutputFile> files = report_files(document);
  ASSERT_EQ(files.size(), 1U + document["modes"].size());
  EXPECT_EQ(files[0].relative_path, "report.html");
  EXPECT_EQ(files[1].relative_path, "animations/mode-01.xyz");
}

}  // namespace
}  // namespace overtone
