// The intensity fields of `analyze`, and the `spectrum` and `assign` commands end to end on
// the shipped examples and on a molecule from SMILES.
#include <gtest/gtest.h>
#include <unistd.h>

#include <algorithm>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <nlohmann/json.hpp>
#include <sstream>
#include <string>

#include "support/program_run.hpp"

namespace {

const std::string source_dir = OVERTONE_SOURCE_DIR;

using overtone::testing::expect_one_line_error;
using overtone::testing::ProgramRun;
using overtone::testing::slurp;

std::string temp_path(const std::string& name) {
  return overtone::testing::process_temp_path("overtone-spectra-", name);
}

ProgramRun run(const std::string& arguments) {
  return overtone::testing::run_program_line(arguments, "overtone-spectra-");
}

std::string write_temp(const std::string& name, const std::string& text) {
  const std::string path = temp_path(name);
  std::ofstream(path) << text;
  return path;
}

std::string first_line(const std::string& text) { return text.substr(0, text.find('\n')); }

const std::string water =
    source_dir + "/molecules/water.xyz --potential " + source_dir + "/potentials/water.toml";
const std::string carbon_dioxide = source_dir + "/molecules/carbon-dioxide.xyz --potential " + source_dir +
                                   "/potentials/carbon-dioxide.toml";

TEST(CliIntensities, AnalyzeWritesTheIntensityFieldsAndColumns) {
  const std::string out = temp_path("analyze");
  std::filesystem::remove_all(out);
  const ProgramRun result = run("analyze " + water + " --no-families --out " + out);
  ASSERT_EQ(result.status, 0) << result.err;
  const nlohmann::json document = nlohmann::json::parse(slurp(out + "/analysis.json"));
  for (const auto& mode : document["modes"]) {
    EXPECT_TRUE(mode["ir_intensity_km_per_mol"].is_number());
    EXPECT_TRUE(mode["raman_activity_a4_per_u"].is_null());
    EXPECT_TRUE(mode["depolarization_ratio"].is_null());
  }
  EXPECT_NE(document["intensity_model"]["source"].get<std::string>().find("MMFF94"), std::string::npos);
  EXPECT_NE(document["intensity_model"]["notes"].get<std::string>().find("charge flux"), std::string::npos);
  for (const auto& level : document["levels"]) EXPECT_TRUE(level.contains("ir_intensity_km_per_mol"));
  const std::string header = first_line(slurp(out + "/lines.csv"));
  EXPECT_NE(header.find(",ir_intensity_km_per_mol,raman_activity_a4_per_u"), std::string::npos) << header;
}

TEST(CliSpectrum, WritesCurveSticksAndPlotFromAMoleculeAndFromADocument) {
  const std::string prefix = temp_path("water-ir");
  const ProgramRun direct = run("spectrum " + water + " --fwhm 8 --temperature 500 --out " + prefix);
  ASSERT_EQ(direct.status, 0) << direct.err;
  EXPECT_EQ(first_line(slurp(prefix + ".csv")), "wavenumber_cm1,ir_intensity_km_per_mol_per_cm1");
  EXPECT_EQ(first_line(slurp(prefix + "-lines.csv")), "label,position_cm1,intensity,polyad,partners,hot");
  EXPECT_NE(slurp(prefix + "-lines.csv").find(",yes"), std::string::npos);  // hot bands
  EXPECT_NE(slurp(prefix + ".svg").find("<svg"), std::string::npos);

  const std::string out = temp_path("analyze-co2");
  std::filesystem::remove_all(out);
  ASSERT_EQ(run("analyze " + carbon_dioxide + " --no-families --electric-response " + source_dir +
                "/tests/data/intensity/co2-model-response.toml --out " + out)
                .status,
            0);
  const std::string raman = temp_path("co2-raman");
  const ProgramRun from_document =
      run("spectrum " + out + "/analysis.json --raman --shape voigt --range 1200:1450 --out " + raman);
  ASSERT_EQ(from_document.status, 0) << from_document.err;
  const std::string sticks = slurp(raman + "-lines.csv");
  EXPECT_NE(sticks.find("ν1,"), std::string::npos) << sticks;
  EXPECT_NE(sticks.find("2ν2,"), std::string::npos) << sticks;  // the Fermi partner borrows activity
  EXPECT_NE(slurp(raman + ".svg").find("[polyad 1]"), std::string::npos);
}

TEST(CliSpectrum, RefusesWhatItCannotDo) {
  expect_one_line_error(run("spectrum " + water + " --shape triangle"), "line shape");
  expect_one_line_error(run("spectrum " + water + " --raman --out " + temp_path("none")), "Raman");
  expect_one_line_error(run("spectrum " + water + " --range 10"), "--range");
}

TEST(CliAssign, WaterAndHeavyWaterFromTheShippedPotential) {
  // Band origins as in tests/assign (water: Tennyson et al. 2013; D2O: Shimanouchi 1972;
  // from memory); 2500 cm⁻¹ is a spurious band.
  const std::string bands =
      write_temp("water-bands.csv",
                 "wavenumber_cm1,technique,isotopologue,label\n"
                 "1594.7,IR,,bend\n3151.6,IR,,\n3657.1,IR,,\n3755.9,IR,,\n2500,IR,,spurious\n"
                 "1178.4,IR,D2O,\n2671.6,IR,D2O,\n2787.7,IR,D2O,\n");
  const std::string json = temp_path("assign.json"), csv = temp_path("assign.csv");
  const ProgramRun result = run("assign " + water + " --observed " + bands +
                                " --isotopologue D2O=2=2,3=2 --scale fit --json " + json + " --csv " + csv);
  ASSERT_EQ(result.status, 0) << result.err;
  const nlohmann::json document = nlohmann::json::parse(slurp(json));
  const std::vector<std::string> expected = {"ν2", "2ν2", "ν1", "ν3", "", "ν2", "ν1", "ν3"};
  ASSERT_EQ(document["bands"].size(), expected.size());
  for (std::size_t i = 0; i < expected.size(); ++i)
    EXPECT_EQ(document["bands"][i]["level"].is_null() ? "" : document["bands"][i]["level"].get<std::string>(),
              expected[i]);
  EXPECT_TRUE(document["summary"]["scaled"]["scale"].is_number());
  EXPECT_EQ(first_line(slurp(csv)),
            "observed_cm1,technique,isotopologue,label,level,quanta,species,predicted_cm1,residual_cm1,cost,"
            "runner_up,margin,polyad");
  EXPECT_NE(result.out.find("Scale factor"), std::string::npos);
  expect_one_line_error(
      run("assign " + water + " --observed " + write_temp("bad.csv", "wavenumber_cm1\nabc\n")), "line 2");
  expect_one_line_error(run("assign " + water + " --observed " + bands), "D2O");
}

TEST(CliSmiles, FormaldehydeFromSmilesThroughAllThreeCommands) {
  const std::string out = temp_path("formaldehyde");
  std::filesystem::remove_all(out);
  ASSERT_EQ(run("analyze smiles:C=O --no-families --out " + out).status, 0);
  const nlohmann::json document = nlohmann::json::parse(slurp(out + "/analysis.json"));
  EXPECT_EQ(document["modes"].size(), 6u);
  EXPECT_EQ(document["intensity_model"]["source"], "fixed partial charges (MMFF94)");
  const std::string prefix = temp_path("formaldehyde-ir");
  const ProgramRun spectrum = run("spectrum smiles:C=O --harmonic --out " + prefix);
  ASSERT_EQ(spectrum.status, 0) << spectrum.err;
  // Gas-phase fundamentals of formaldehyde (Shimanouchi 1972, from memory): the C=O stretch
  // 1746 cm⁻¹ among them; MMFF94 is tens of cm⁻¹ off, so only a run is checked here.
  const std::string bands = write_temp(
      "formaldehyde.csv", "wavenumber_cm1,technique\n2782,IR\n1746,IR\n1500,IR\n1167,IR\n2843,IR\n1249,IR\n");
  const ProgramRun assign = run("assign smiles:C=O --observed " + bands + " --harmonic --expected-error 60");
  ASSERT_EQ(assign.status, 0) << assign.err;
  EXPECT_NE(assign.out.find("Fundamentals:"), std::string::npos);
}

}  // namespace
