// The program itself: the main job writes its files with the documented fields, and
// bad input gives one clear line on stderr and a non-zero exit, never a crash.
#include <gtest/gtest.h>
#include <unistd.h>

#include <algorithm>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <nlohmann/json.hpp>
#include <sstream>
#include <string>
#include <utility>
#include <vector>

#include "support/program_run.hpp"

namespace {

const std::string source_dir = OVERTONE_SOURCE_DIR;

using overtone::testing::expect_one_line_error;
using overtone::testing::ProgramRun;
using overtone::testing::slurp;

ProgramRun run(const std::string& arguments) {
  return overtone::testing::run_program_line(arguments, "overtone-cli-");
}

std::string write_temp(const std::string& name, const std::string& text) {
  const std::string path = ::testing::TempDir() + std::to_string(getpid()) + "-" + name;
  std::ofstream(path) << text;
  return path;
}

TEST(Cli, AnalyzeWritesJsonAndCsvWithTheDocumentedFields) {
  const std::string out = ::testing::TempDir() + "overtone-analyze-" + std::to_string(getpid());
  std::filesystem::remove_all(out);
  const ProgramRun result = run("analyze " + source_dir + "/molecules/water.xyz --potential " + source_dir +
                                "/potentials/water.toml --out " + out);
  ASSERT_EQ(result.status, 0) << result.err;
  const nlohmann::json document = nlohmann::json::parse(slurp(out + "/analysis.json"));
  ASSERT_EQ(document["atoms"].size(), 3u);
  for (const auto& atom : document["atoms"]) {
    EXPECT_TRUE(atom.contains("element"));
    EXPECT_TRUE(atom.contains("mass_da"));
    EXPECT_EQ(atom["position_angstrom"].size(), 3u);
  }
  EXPECT_TRUE(document["optimization"]["converged"].get<bool>());
  EXPECT_TRUE(document["optimization"].contains("rms_gradient"));
  EXPECT_TRUE(document["optimization"].contains("energy"));
  EXPECT_EQ(document["optimization"]["units"]["energy"], "kcal/mol");
  ASSERT_EQ(document["modes"].size(), 3u);
  for (const auto& mode : document["modes"]) {
    EXPECT_TRUE(mode.contains("number"));
    EXPECT_GT(mode["frequency_cm1"].get<double>(), 0.0);
    EXPECT_GT(mode["reduced_mass_da"].get<double>(), 0.0);
    EXPECT_EQ(mode["displacement"].size(), 3u);
  }
  // Symmetry fields: C2v water is 2A1 + B2 (Herzberg 1945, from memory), all IR and Raman active.
  EXPECT_EQ(document["point_group"], "C2v");
  EXPECT_EQ(document["modes"][0]["species"], "A1");
  EXPECT_EQ(document["modes"][2]["species"], "B2");
  EXPECT_TRUE(document["modes"][2]["ir_active"].get<bool>());
  EXPECT_TRUE(document["modes"][2]["raman_active"].get<bool>());
  EXPECT_EQ(document["modes"][1]["degenerate_set"], 2);
  const std::string csv = slurp(out + "/modes.csv");
  EXPECT_EQ(std::count(csv.begin(), csv.end(), '\n'), 4);  // header + 3 modes
}

TEST(Cli, ModesPrintsATableAndJsonToStandardOutput) {
  const ProgramRun table =
      run("modes " + source_dir + "/molecules/hcl.xyz -p " + source_dir + "/potentials/hcl-morse.toml");
  ASSERT_EQ(table.status, 0) << table.err;
  EXPECT_NE(table.out.find("2990.95"), std::string::npos) << table.out;
  const ProgramRun json = run("modes " + source_dir + "/molecules/hcl.xyz -p " + source_dir +
                              "/potentials/hcl-morse.toml --json -");
  ASSERT_EQ(json.status, 0) << json.err;
  EXPECT_EQ(nlohmann::json::parse(json.out)["modes"].size(), 1u);
}

TEST(Cli, IsotopeOptionChangesTheMasses) {
  const ProgramRun result = run("modes " + source_dir + "/molecules/water.xyz -p " + source_dir +
                                "/potentials/water.toml --isotope 2=2 --isotope 3=2 --json -");
  ASSERT_EQ(result.status, 0) << result.err;
  const auto document = nlohmann::json::parse(result.out);
  EXPECT_EQ(document["atoms"][1]["mass_number"], 2);
  EXPECT_LT(document["modes"][0]["frequency_cm1"].get<double>(), 3000.0);  // O–D stretches
}

TEST(Cli, BadInputGivesOneClearLineAndNonZeroExit) {
  expect_one_line_error(run("modes /no/such/molecule.xyz"), "does not exist");
  expect_one_line_error(run("modes " + write_temp("empty.xyz", "")), "is empty");
  expect_one_line_error(run("modes " + write_temp("unknown.xyz", "2\nx\nO 0 0 0\nQq 0 0 1\n")), "element");
  expect_one_line_error(run("modes " + write_temp("close.xyz", "2\nx\nO 0 0 0\nH 0 0 0.1\n")), "apart");
  expect_one_line_error(run("modes " + source_dir + "/tests/data/molecules/sulfur-hexafluoride.xyz"),
                        "no atom type");
  expect_one_line_error(run("modes " + source_dir + "/molecules/water.xyz --isotope 2=40"), "no isotope 40H");
  expect_one_line_error(run("modes " + source_dir + "/molecules/water.xyz -p no-such-field"), "neither");
  expect_one_line_error(
      run("modes " + source_dir + "/molecules/methane.xyz -p " + source_dir + "/potentials/water.toml"),
      "atom");
}

TEST(Cli, SymmetryCommandWorksOnEveryShippedMolecule) {
  // Expected groups: common practice, no source.
  const std::vector<std::pair<std::string, std::string>> expected = {
      {"hcl", "C∞v"}, {"water", "C₂v"}, {"carbon-dioxide", "D∞h"}, {"ammonia", "C₃v"}, {"methane", "Td"}};
  for (const auto& [name, group] : expected) {
    const ProgramRun result = run("symmetry " + source_dir + "/molecules/" + name + ".xyz");
    ASSERT_EQ(result.status, 0) << result.err;
    EXPECT_EQ(result.out.rfind("Point group " + group, 0), 0u) << result.out.substr(0, 80);
  }
}

const std::vector<std::string> shipped_examples = {"hcl", "water", "carbon-dioxide", "ammonia", "methane"};

std::string example_arguments(const std::string& name) {
  const std::string potential = name == "hcl" ? "hcl-morse" : name;
  return source_dir + "/molecules/" + name + ".xyz -p " + source_dir + "/potentials/" + potential + ".toml";
}

TEST(Cli, AnharmonicWorksOnEveryShippedExampleAndWritesTheLineList) {
  for (const auto& name : shipped_examples) {
    const std::string lines = write_temp(name + "-lines.csv", "");
    const ProgramRun result = run("anharmonic " + example_arguments(name) + " --lines " + lines);
    ASSERT_EQ(result.status, 0) << name << ": " << result.err;
    EXPECT_NE(result.out.find("VPT2"), std::string::npos) << name;
    const std::string csv = slurp(lines);
    EXPECT_EQ(csv.rfind("label,kind,quanta,", 0), 0u) << name;
    EXPECT_GE(std::count(csv.begin(), csv.end(), '\n'), 2) << name;
  }
  const ProgramRun json = run("anharmonic " + example_arguments("water") + " --json -");
  ASSERT_EQ(json.status, 0) << json.err;
  const auto document = nlohmann::json::parse(json.out);
  for (const char* key : {"modes", "force_constants", "anharmonicity", "levels", "resonances"})
    EXPECT_TRUE(document.contains(key)) << key;
  // Water: fundamentals, overtones and binary combinations of 3 modes: 3 + 3 + 3 levels.
  EXPECT_EQ(document["levels"].size(), 9u);
}

TEST(Cli, FamiliesWorksOnEveryShippedExampleAndWritesBackbones) {
  for (const auto& name : shipped_examples) {
    // The polyatomic examples with degenerate modes: one mode, to keep the suite quick.
    const std::string selection = (name == "ammonia" || name == "methane") ? " --mode 1" : "";
    const ProgramRun result = run("families " + example_arguments(name) + " --quanta 1" + selection);
    ASSERT_EQ(result.status, 0) << name << ": " << result.err;
    EXPECT_NE(result.out.find("reached_energy_max"), std::string::npos) << name << result.out;
  }
  const std::string folder = ::testing::TempDir() + "overtone-backbones-" + std::to_string(getpid());
  std::filesystem::remove_all(folder);
  const ProgramRun json =
      run("families " + example_arguments("carbon-dioxide") + " --quanta 1 --json - --csv " + folder);
  ASSERT_EQ(json.status, 0) << json.err;
  const auto document = nlohmann::json::parse(json.out);
  // CO2: one family each for ν1 and ν3; the bend's standing and rotating families; and the
  // family born where ν1's family period-doubles (it lies 8 cm⁻¹ from twice the bend).
  ASSERT_EQ(document["families"].size(), 5u);
  int born = 0;
  for (const auto& family : document["families"])
    if (!family["born_from_family"].is_null()) {
      ++born;
      EXPECT_EQ(family["birth_kind"], "period_doubling");
    }
  EXPECT_EQ(born, 1);
  EXPECT_TRUE(document["families_summary"].contains("orbit_count"));
  int files = 0;
  for (const auto& entry : std::filesystem::directory_iterator(folder))
    files += entry.path().extension() == ".csv";
  EXPECT_EQ(files, 5);
  const ProgramRun without =
      run("families " + example_arguments("carbon-dioxide") + " --quanta 1 --no-branches --json -");
  ASSERT_EQ(without.status, 0) << without.err;
  EXPECT_EQ(nlohmann::json::parse(without.out)["families"].size(), 4u);
  expect_one_line_error(run("families " + example_arguments("carbon-dioxide") + " --branch-depth 0"),
                        "--branch-depth");
}

TEST(Cli, AnalyzeIncludesTheAnharmonicAndFamiliesStages) {
  const std::string out = ::testing::TempDir() + "overtone-analyze-all-" + std::to_string(getpid());
  std::filesystem::remove_all(out);
  const ProgramRun result =
      run("analyze " + example_arguments("carbon-dioxide") + " --quanta 1 --out " + out);
  ASSERT_EQ(result.status, 0) << result.err;
  const auto document = nlohmann::json::parse(slurp(out + "/analysis.json"));
  for (const char* key : {"modes", "levels", "resonances", "families", "resonance_cross_check"})
    EXPECT_TRUE(document.contains(key)) << key;
  EXPECT_TRUE(std::filesystem::exists(out + "/lines.csv"));
  EXPECT_TRUE(std::filesystem::exists(out + "/families"));
  EXPECT_NE(result.out.find("2ν2 / ν1"), std::string::npos) << result.out;
  // The console shows the summary and says where the full lists went; report.txt has them.
  EXPECT_NE(result.out.find("report.txt (full text)"), std::string::npos) << result.out;
  EXPECT_EQ(result.out.find("Anharmonicity constants x"), std::string::npos) << result.out;
  const std::string full = slurp(out + "/report.txt");
  EXPECT_NE(full.find("Anharmonicity constants x"), std::string::npos);
  EXPECT_NE(full.find("semiclassical ladder"), std::string::npos);
}

TEST(Cli, ProgressGoesToStderrOnlyWhenAskedOnAPipe) {
  const ProgramRun quiet = run("anharmonic " + example_arguments("water"));
  ASSERT_EQ(quiet.status, 0) << quiet.err;
  EXPECT_EQ(quiet.err.find("force constants"), std::string::npos) << quiet.err;
  const ProgramRun shown = run("anharmonic " + example_arguments("water") + " --progress");
  ASSERT_EQ(shown.status, 0) << shown.err;
  EXPECT_NE(shown.err.find("overtone: force constants 19/19 (100%)"), std::string::npos) << shown.err;
  EXPECT_NE(shown.err.find("overtone: VPT2"), std::string::npos) << shown.err;
  EXPECT_EQ(shown.out.find("overtone: VPT2"), std::string::npos);
}

TEST(Cli, Vpt2ExclusionDropsTheLowModesAndRefusesBadValues) {
  // Water's bend (about 1600 cm⁻¹) lies below 2000 cm⁻¹, its stretches above.
  const ProgramRun reduced =
      run("anharmonic " + example_arguments("water") + " --vpt2-exclude-below 2000 --json -");
  ASSERT_EQ(reduced.status, 0) << reduced.err;
  const auto document = nlohmann::json::parse(reduced.out);
  EXPECT_EQ(document["vpt2_validity"]["exclude_below_cm1"].get<double>(), 2000.0);
  int excluded = 0;
  for (const auto& mode : document["vpt2_validity"]["modes"])
    excluded += mode["excluded"].get<bool>() ? 1 : 0;
  EXPECT_EQ(excluded, 1);
  EXPECT_EQ(document["levels"].size(), 5u);  // 2 fundamentals, 2 overtones, 1 combination
  const ProgramRun text = run("anharmonic " + example_arguments("water") + " --vpt2-exclude-below 2000");
  EXPECT_NE(text.out.find("excluded from VPT2"), std::string::npos) << text.out;
  expect_one_line_error(run("anharmonic " + example_arguments("water") + " --vpt2-exclude-below -3"),
                        "--vpt2-exclude-below");
  expect_one_line_error(run("anharmonic " + example_arguments("water") + " --vpt2-exclude-below 9000"),
                        "excludes every mode");
}

TEST(Cli, AnharmonicFullReportGoesToTheNamedFile) {
  const std::string full = write_temp("full-report.txt", "");
  const ProgramRun result = run("anharmonic " + example_arguments("water") + " --full-report " + full);
  ASSERT_EQ(result.status, 0) << result.err;
  EXPECT_NE(result.out.find(full + " (full text)"), std::string::npos) << result.out;
  EXPECT_NE(slurp(full).find("Levels (cm⁻¹"), std::string::npos);
  EXPECT_EQ(result.out.find("Levels (cm⁻¹"), std::string::npos);
}

TEST(Cli, ExportedTaylorExpansionIsAPotentialForEveryCommand) {
  const std::string taylor = write_temp("water-taylor.toml", "");
  const ProgramRun exported =
      run("anharmonic " + example_arguments("water") + " --export-taylor " + taylor + " --json -");
  ASSERT_EQ(exported.status, 0) << exported.err;
  const auto original = nlohmann::json::parse(exported.out);
  const std::string water = source_dir + "/molecules/water.xyz -p " + taylor;
  const ProgramRun again = run("anharmonic " + water + " --json -");
  ASSERT_EQ(again.status, 0) << again.err;
  const auto reread = nlohmann::json::parse(again.out);
  // The expansion is the quartic force field itself: harmonic wavenumbers and VPT2
  // levels come back to the precision of the written constants (17 digits) and the
  // re-optimization (rms gradient 1e-6 kcal/mol/Å moves ω by far less than 1e-3 cm⁻¹).
  constexpr double round_trip_cm1 = 1e-3;
  ASSERT_EQ(reread["levels"].size(), original["levels"].size());
  for (std::size_t k = 0; k < original["modes"].size(); ++k)
    EXPECT_NEAR(reread["modes"][k]["frequency_cm1"].get<double>(),
                original["modes"][k]["frequency_cm1"].get<double>(), round_trip_cm1);
  for (std::size_t k = 0; k < original["levels"].size(); ++k)
    EXPECT_NEAR(reread["levels"][k]["anharmonic_cm1"].get<double>(),
                original["levels"][k]["anharmonic_cm1"].get<double>(), round_trip_cm1);
  const ProgramRun families = run("families " + water + " --quanta 1");
  ASSERT_EQ(families.status, 0) << families.err;
  EXPECT_NE(families.out.find("reached_energy_max"), std::string::npos);
  EXPECT_EQ(run("symmetry " + source_dir + "/molecules/water.xyz --with-modes -p " + taylor).status, 0);
}

TEST(Cli, FamilyOptionsAreChecked) {
  expect_one_line_error(run("families " + example_arguments("water") + " --mode 7"), "no fundamental ν7");
  EXPECT_NE(run("families " + example_arguments("water") + " --quanta 1 --energy-max 100").status, 0);
}

TEST(Cli, UsageErrorsExitNonZero) {
  EXPECT_NE(run("").status, 0);
  EXPECT_NE(run("modes").status, 0);
  EXPECT_NE(run("no-such-command x").status, 0);
}

}  // namespace

// Every user error is one line "overtone: error: ..." with exit status 1 (README, "Errors").
TEST(Cli, FamilyRangesAreRefusedWithTheValidRange) {
  const std::string water = example_arguments("water");
  for (const std::string quanta : {"0", "-1", "1e9", "nan"})
    expect_one_line_error(run("families " + water + " --quanta " + quanta), "0 < value <= 20");
  for (const std::string energy : {"-5", "nan", "1e9"})
    expect_one_line_error(run("families " + water + " --energy-max " + energy), "0 < value <= 100000");
  const std::string out = ::testing::TempDir() + "overtone-refused-" + std::to_string(getpid());
  std::filesystem::remove_all(out);
  expect_one_line_error(run("analyze " + water + " --quanta nan --out " + out), "--quanta");
  EXPECT_FALSE(std::filesystem::exists(out));
}

TEST(Cli, UsageErrorsAreOneLineWithStatusOne) {
  const std::string water = example_arguments("water");
  expect_one_line_error(run("families " + water + " --mode abc"), "--mode");
  expect_one_line_error(run("families " + water + " --quanta abc"), "--quanta");
  expect_one_line_error(run("modes " + water + " --no-such-option"), "--no-such-option");
  expect_one_line_error(run(""), "command is required");
  expect_one_line_error(run("modes"), "MOLECULE is required");
  expect_one_line_error(run("no-such-command x"), "unknown command 'no-such-command'");
  expect_one_line_error(run("families " + water + " --quanta 1 --energy-max 100"), "excludes");
  // -i is not a short form of --isotope (it is another toolkit's input-format flag).
  expect_one_line_error(run("modes " + water + " -i 2=2"), "-i");
  const ProgramRun help = run("--help");
  EXPECT_EQ(help.status, 0);
  EXPECT_NE(help.out.find("modes"), std::string::npos);
  EXPECT_EQ(run("families --help").status, 0);
}

// A run that fails leaves no folder under the target name, complete-looking or not, and
// no temporary folder beside it.
TEST(Cli, AnalyzeLeavesNoPartialOutput) {
  const std::filesystem::path parent =
      std::filesystem::path(::testing::TempDir()) / ("overtone-partial-" + std::to_string(getpid()));
  std::filesystem::remove_all(parent);
  std::filesystem::create_directories(parent);
  const std::string out = (parent / "out").string();
  // The ν number is checked after the harmonic analysis, before any later stage.
  expect_one_line_error(run("analyze " + example_arguments("water") + " --mode 7 --out " + out),
                        "no fundamental ν7");
  EXPECT_TRUE(std::filesystem::is_empty(parent));
  // A folder holding other files is refused at the end and left as it was.
  std::filesystem::create_directories(out);
  std::ofstream(out + "/notes.txt") << "mine\n";
  expect_one_line_error(run("analyze " + example_arguments("water") + " --no-families --out " + out),
                        "holds files this program did not write");
  EXPECT_EQ(slurp(out + "/notes.txt"), "mine\n");
  int entries = 0;
  for ([[maybe_unused]] const auto& entry : std::filesystem::directory_iterator(out)) ++entries;
  EXPECT_EQ(entries, 1);
  int siblings = 0;
  for ([[maybe_unused]] const auto& entry : std::filesystem::directory_iterator(parent)) ++siblings;
  EXPECT_EQ(siblings, 1);
}

TEST(Cli, HostileTitleGivesValidJsonThroughAnalyze) {
  // A Latin-1 byte, a control character, quotes and a backslash in the XYZ title line.
  const std::string molecule = write_temp("hostile.xyz",
                                          "3\nwat\xE9r \x01 \"q\" \\\n"
                                          "O 0.0 0.0 0.0\nH 0.757 0.0 0.586\nH -0.757 0.0 0.586\n");
  const std::string out = ::testing::TempDir() + "overtone-hostile-" + std::to_string(getpid());
  std::filesystem::remove_all(out);
  const ProgramRun result =
      run("analyze " + molecule + " -p " + source_dir + "/potentials/water.toml --no-families --out " + out);
  ASSERT_EQ(result.status, 0) << result.err;
  const auto document = nlohmann::json::parse(slurp(out + "/analysis.json"));
  EXPECT_EQ(document["molecule"]["title"], "wat\xEF\xBF\xBDr \x01 \"q\" \\");
  EXPECT_EQ(result.out.find('\x01'), std::string::npos);  // shown as \x01 on the terminal
}

TEST(Cli, TaylorExpansionFileIsAlsoAMolecule) {
  const std::string taylor = write_temp("water-as-molecule.toml", "");
  const ProgramRun exported =
      run("anharmonic " + example_arguments("water") + " --export-taylor " + taylor + " --json -");
  ASSERT_EQ(exported.status, 0) << exported.err;
  const auto original = nlohmann::json::parse(exported.out);
  // No --potential: the file is the potential too, with its own masses.
  const ProgramRun modes = run("modes " + taylor + " --json -");
  ASSERT_EQ(modes.status, 0) << modes.err;
  EXPECT_TRUE(modes.err.empty()) << modes.err;  // same masses: no warning
  const auto reread = nlohmann::json::parse(modes.out);
  // Same field, same masses: the wavenumbers come back to the re-optimization's precision
  // (as in ExportedTaylorExpansionIsAPotentialForEveryCommand).
  constexpr double round_trip_cm1 = 1e-3;
  ASSERT_EQ(reread["modes"].size(), original["modes"].size());
  for (std::size_t k = 0; k < original["modes"].size(); ++k)
    EXPECT_NEAR(reread["modes"][k]["frequency_cm1"].get<double>(),
                original["modes"][k]["frequency_cm1"].get<double>(), round_trip_cm1);
  for (std::size_t a = 0; a < original["atoms"].size(); ++a)
    EXPECT_EQ(reread["atoms"][a]["mass_da"], original["atoms"][a]["mass_da"]);

  // The same file written with the average mass of hydrogen (1.00794 Da, standard atomic
  // weight; common practice, no source) and used with the water file's isotopic masses:
  // a warning names the difference, the analysis still runs on the molecule's masses.
  std::string text = slurp(taylor);
  const std::string isotopic = "1.007825032";
  for (std::size_t at = text.find(isotopic); at != std::string::npos; at = text.find(isotopic, at))
    text.replace(at, isotopic.size(), "1.00794");
  const std::string average = write_temp("water-average-masses.toml", text);
  const ProgramRun warned = run("modes " + source_dir + "/molecules/water.xyz -p " + average);
  ASSERT_EQ(warned.status, 0) << warned.err;
  EXPECT_EQ(warned.err.rfind("overtone: warning: ", 0), 0u) << warned.err;
  EXPECT_NE(warned.err.find("other masses than the molecule's"), std::string::npos) << warned.err;
}

TEST(Cli, FamiliesOfOneFundamentalAreNamedWithItsNuNumber) {
  const std::string folder = ::testing::TempDir() + "overtone-nu-names-" + std::to_string(getpid());
  std::filesystem::remove_all(folder);
  const ProgramRun result =
      run("families " + example_arguments("carbon-dioxide") + " --mode 2 --quanta 1 --csv " + folder);
  ASSERT_EQ(result.status, 0) << result.err;
  EXPECT_EQ(result.out.find("modes 2,3"), std::string::npos) << result.out;
  EXPECT_NE(result.out.find("ν2"), std::string::npos);
  // The CO2 bend ν2 (textbook numbering) has a standing and a rotating family.
  std::vector<std::string> names;
  for (const auto& entry : std::filesystem::directory_iterator(folder))
    names.push_back(entry.path().filename());
  std::sort(names.begin(), names.end());
  ASSERT_EQ(names.size(), 2u);
  for (const std::string& name : names) {
    EXPECT_EQ(name.rfind("family-0", 0), 0u) << name;
    EXPECT_NE(name.find("-nu2.csv"), std::string::npos) << name;
  }
}

namespace {

TEST(Cli, DrawingsAreCompletedUnlessRefused) {
  // Ethanol as a 2-D drawing without hydrogens (tests/data/incomplete): completed by
  // default with a warning, refused with --refuse-incomplete naming the way back.
  const std::string drawing = source_dir + "/tests/data/incomplete/ethanol-drawing.mol";
  const ProgramRun completed = run("modes " + drawing + " --json -");
  ASSERT_EQ(completed.status, 0) << completed.err;
  EXPECT_NE(completed.err.find("hydrogen"), std::string::npos) << completed.err;
  EXPECT_EQ(nlohmann::json::parse(completed.out)["atoms"].size(), 9u);  // C2H6O: ethanol's 9 atoms
  expect_one_line_error(run("modes " + drawing + " --refuse-incomplete"), "--refuse-incomplete");
}

TEST(Cli, ConformerSearchAnalysesTheLowerConformer) {
  // n-Butane started gauche (C–C–C–C 60°): the structure relaxes to the gauche minimum,
  // which lies above the anti conformer (about 0.6–0.9 kcal/mol on general force fields;
  // 0.67 kcal/mol measured, from memory). Without the search a note says so; with it the
  // anti conformer (C2h, common practice, no source) is analysed.
  const std::string gauche = write_temp("butane-gauche.xyz",
                                        "14\nbutane gauche\n"
                                        "C   -1.9385  0.4700 -0.4450\nC   -0.7236  0.7230  0.4464\n"
                                        "C    0.5831 -0.0100  0.1010\nC    1.0990 -1.2200  0.8800\n"
                                        "H   -2.7910  1.0516 -0.0784\nH   -2.2260 -0.5865 -0.4390\n"
                                        "H   -1.7330  0.7575 -1.4834\nH   -0.9930  0.4610  1.4784\n"
                                        "H   -0.5310  1.7990  0.4422\nH    0.4360  0.2950 -0.9423\n"
                                        "H    1.3710  0.6800  0.4280\nH    0.3560 -2.0250  0.8600\n"
                                        "H    1.2960 -0.9600  1.9290\nH    2.0290 -1.6080  0.4490\n");
  const ProgramRun plain = run("modes " + gauche);
  ASSERT_EQ(plain.status, 0) << plain.err;
  EXPECT_NE((plain.out + plain.err).find("lower was found"), std::string::npos) << plain.out << plain.err;
  EXPECT_NE(plain.out.find("point group C₂ "), std::string::npos) << plain.out;
  const ProgramRun searched = run("modes " + gauche + " --conformer-search");
  ASSERT_EQ(searched.status, 0) << searched.err;
  EXPECT_NE(searched.out.find("point group C₂h"), std::string::npos) << searched.out;
}

// The H³⁵Cl expansion to third order with a cubic constant of 40ω: the barrier
// (2/3)ω³/φ₃² (closed form) lies below the amplitude scan's first step, so the structure
// is no minimum for the families. `analyze` reports the families stage as skipped, stores
// the reason and carries on; `families`, which asked for that stage alone, ends with it.
TEST(Cli, AStageThatCannotRunIsSkippedByAnalyzeAndRefusedAlone) {
  constexpr double kOmegaCm1 = 2990.946;  // H35Cl harmonic wavenumber of potentials/hcl-morse.toml
  constexpr double kCubicOverOmega = 40.0;
  const std::string expansion = write_temp(
      "steep-hcl.toml",
      "format = \"overtone-taylor-expansion\"\nversion = 1\ntitle = \"steep\"\ncoordinates = \"normal\"\n"
      "[units]\nenergy = \"cm-1\"\nlength = \"angstrom\"\n"
      "[reference]\nelements = [\"H\", \"Cl\"]\nmasses_da = [1.007825032, 34.96885268]\n"
      "positions = [[0, 0, 0], [0, 0, 1.27455]]\nenergy = 0\n"
      "[normal]\ncubic = [[1, 1, 1, " +
          std::to_string(kCubicOverOmega * kOmegaCm1) +
          "]]\n"
          "[[normal.modes]]\nfrequency_cm1 = " +
          std::to_string(kOmegaCm1) + "\ndisplacement = [[0, 0, 0.104266922], [0, 0, -0.00300504037]]\n");
  const std::string out = ::testing::TempDir() + "overtone-steep-" + std::to_string(getpid());
  std::filesystem::remove_all(out);
  const ProgramRun analyze = run("analyze " + expansion + " --quanta 1 --out " + out);
  ASSERT_EQ(analyze.status, 0) << analyze.err;
  EXPECT_NE(
      analyze.err.find("families stage skipped: the structure is not a minimum of this potential along ν1"),
      std::string::npos)
      << analyze.err;
  const nlohmann::json document = nlohmann::json::parse(slurp(out + "/analysis.json"));
  EXPECT_NE(document["families_skipped"].get<std::string>().find("not a minimum"), std::string::npos);
  EXPECT_TRUE(document.contains("levels"));  // the anharmonic stage ran
  expect_one_line_error(run("families " + expansion + " --quanta 1"),
                        "not a minimum of this potential along ν1");
}

}  // namespace
