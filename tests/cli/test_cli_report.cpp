// `overtone analyze` writes the HTML report and its animations; `overtone report` rebuilds
// them from analysis.json with a measured band list, and refuses bad input in one line.
#include <gtest/gtest.h>
#include <unistd.h>

#include <filesystem>
#include <fstream>
#include <string>

#include "support/program_run.hpp"

namespace {

const std::string source_dir = OVERTONE_SOURCE_DIR;

using overtone::testing::expect_one_line_error;
using overtone::testing::ProgramRun;
using overtone::testing::slurp;

ProgramRun run(const std::string& arguments) {
  return overtone::testing::run_program_line(arguments, "overtone-cli-report-");
}

std::string temp_path(const std::string& name) {
  return ::testing::TempDir() + "overtone-report-" + std::to_string(getpid()) + "-" + name;
}

TEST(CliReport, AnalyzeWritesTheReportAndReportRebuildsIt) {
  const std::string out = temp_path("water");
  std::filesystem::remove_all(out);
  const ProgramRun analysed =
      run("analyze " + source_dir + "/molecules/water.xyz --potential " + source_dir +
          "/potentials/water.toml --orbit-energy 2000 --orbit-energy 5000 --out " + out);
  ASSERT_EQ(analysed.status, 0) << analysed.err;
  // The summary's last line points to the report.
  const std::string last_line = analysed.out.substr(analysed.out.rfind('\n', analysed.out.size() - 2) + 1);
  EXPECT_NE(last_line.find(out + "/report.html"), std::string::npos) << last_line;
  EXPECT_TRUE(std::filesystem::exists(out + "/report.html"));
  for (const char* name : {"mode-01.xyz", "mode-03.xyz", "family-01.xyz", "family-03.xyz"})
    EXPECT_TRUE(std::filesystem::exists(out + "/animations/" + name)) << name;
  // Two energies, 24 frames each, of 3 atoms (2 + 3 lines per frame).
  const std::string family = slurp(out + "/animations/family-01.xyz");
  EXPECT_EQ(std::count(family.begin(), family.end(), '\n'), 2 * 24 * 5);

  const std::string bands = temp_path("bands.csv");
  std::ofstream(bands) << "wavenumber_cm1,intensity\n1595,1\n3657,0.1\n";
  const std::string before = slurp(out + "/report.html");
  const ProgramRun rebuilt = run("report " + out + " --observed " + bands);
  ASSERT_EQ(rebuilt.status, 0) << rebuilt.err;
  const std::string after = slurp(out + "/report.html");
  EXPECT_NE(after, before);
  EXPECT_NE(after.find("\"bands\":[[1595.0,1.0],[3657.0,0.1]]"), std::string::npos);
  // A later analyze may replace the folder: it holds only what the program writes.
  EXPECT_EQ(run("analyze " + source_dir + "/molecules/water.xyz --potential " + source_dir +
                "/potentials/water.toml --no-families --out " + out)
                .status,
            0);
}

TEST(CliReport, BadInputGivesOneClearLine) {
  expect_one_line_error(run("report " + temp_path("missing")), "cannot read the analysis document");
  const std::string out = temp_path("broken");
  std::filesystem::create_directories(out);
  std::ofstream(out + "/analysis.json") << "{\"atoms\": [";
  expect_one_line_error(run("report " + out), "expected a JSON document");
  std::ofstream(out + "/analysis.json") << "{\"atoms\": []}";
  expect_one_line_error(run("report " + out), "non-empty 'atoms' array");
  // A document edited by hand: a field of the wrong kind.
  std::ofstream(out + "/analysis.json")
      << R"({"atoms": [{"element": "H", "mass_da": "heavy", "position_angstrom": [0, 0, 0]}],
            "modes": [{"number": 1, "frequency_cm1": 100, "mass_weighted_vector": [[1, 0, 0]]}]})";
  expect_one_line_error(run("report " + out), "found a field of another shape");
  const std::string bands = temp_path("bad-bands.csv");
  std::ofstream(bands) << "wavenumber,intensity\n1595,1\n";
  expect_one_line_error(run("report " + out + " --observed " + bands), "wavenumber_cm1");
  expect_one_line_error(run("analyze " + source_dir + "/molecules/water.xyz --potential " + source_dir +
                            "/potentials/water.toml --orbit-energy -3 --out " + temp_path("never")),
                        "orbit energies must be positive");
}

}  // namespace
