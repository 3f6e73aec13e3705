// The screen command end to end: kill and resume, bad records, a rerun that has nothing
// to do, time limits, MPI against one process, shards merged, screen against analyze.
// Each check compares the store with another run of the program (an uninterrupted run,
// the analyze command, a single-process run) or with facts about the inputs.
#include <gtest/gtest.h>

#include <chrono>
#include <cmath>
#include <map>
#include <nlohmann/json.hpp>
#include <thread>

#include "anharmonic/vpt2.hpp"
#include "screen/settings.hpp"
#include "screen_test_helpers.hpp"

namespace overtone {
namespace {

using namespace overtone::testing;
namespace fs = std::filesystem;

// Molecules in tests/data/screen/small-set.sdf: 24 small molecules whose 3-D structures
// Open Babel built once from SMILES (obabel --gen3d). Structures with coordinates, not
// SMILES: Open Babel's builder seeds its random numbers with the time, so a structure built
// from SMILES differs slightly from run to run, and so would the numbers.
constexpr long long small_set_molecules = 24;
// The kill comes once at least this many molecules are written: part-way, not at the start.
constexpr long long results_before_kill = 3;
// Poll interval while waiting for the store to fill (ms).
constexpr int poll_interval_ms = 10;
// Screen and analyze run the same code on the same input, and the store keeps doubles
// exactly (SQLite REAL is IEEE binary64; the worker sends shortest round-trip text), so
// numbers must agree to the last bit; 1e-12 relative leaves room for nothing else.
constexpr double same_computation_tolerance = 1e-12;

std::vector<std::string> screen_arguments(const std::string& input, const fs::path& store,
                                          std::vector<std::string> extra = {}) {
  std::vector<std::string> arguments = {"screen", input, "--store",    store.string(),
                                        "--jobs", "2",   "--progress", "none"};
  arguments.insert(arguments.end(), extra.begin(), extra.end());
  return arguments;
}

// The first n records of the small set, as an SDF file of their own.
fs::path small_subset(const fs::path& folder, int n) {
  const std::string text = file_text(screen_data("small-set.sdf"));
  std::size_t end = 0;
  for (int record = 0; record < n; ++record) end = text.find("$$$$\n", end) + 5;
  std::ofstream(folder / "subset.sdf") << text.substr(0, end);
  return folder / "subset.sdf";
}

TEST(ScreenRuns, KillPartWayThenResumeEqualsUninterruptedRunAndRerunDoesNothing) {
  const fs::path folder = scratch_folder("kill");
  const std::string input = screen_data("small-set.sdf");
  const fs::path full = folder / "full.sqlite";
  const ProgramRun uninterrupted = run_overtone(screen_arguments(input, full), folder);
  ASSERT_EQ(uninterrupted.status, 0) << uninterrupted.err;
  ASSERT_EQ(count_rows(full, "SELECT count(*) FROM results"), small_set_molecules);

  const fs::path killed = folder / "killed.sqlite";
  std::vector<std::string> arguments = screen_arguments(input, killed);
  arguments.insert(arguments.begin(), OVERTONE_BINARY);
  const pid_t pid = spawn_program(arguments, folder / "killed.out", folder / "killed.err");
  ASSERT_GT(pid, 0);
  long long written = 0;
  for (;;) {
    std::this_thread::sleep_for(std::chrono::milliseconds(poll_interval_ms));
    if (fs::exists(killed)) {
      try {
        written = count_rows(killed, "SELECT count(*) FROM results");
      } catch (const std::exception&) {
        written = 0;  // the schema is still being laid out
      }
    }
    if (written >= results_before_kill) break;
    int status = 0;
    ASSERT_EQ(waitpid(pid, &status, WNOHANG), 0) << "the screen ended before it could be killed";
  }
  kill(pid, SIGKILL);
  wait_exit_status(pid);
  const long long at_kill = count_rows(killed, "SELECT count(*) FROM results");
  EXPECT_LT(at_kill, small_set_molecules) << "the kill came after the last molecule";
  // No half-written molecule: every result that is done has its modes.
  EXPECT_EQ(
      count_rows(killed,
                 "SELECT count(*) FROM results WHERE status = 'done' AND NOT EXISTS (SELECT 1 FROM modes "
                 "WHERE modes.result_id = results.result_id)"),
      0);

  const ProgramRun resumed = run_overtone(screen_arguments(input, killed), folder);
  ASSERT_EQ(resumed.status, 0) << resumed.err;
  EXPECT_NE(resumed.out.find(fmt::format("{} already done", at_kill)), std::string::npos) << resumed.out;
  EXPECT_EQ(store_dump(killed), store_dump(full));

  // A finished screen run again computes nothing and rewrites nothing.
  const long long id_sum = count_rows(full, "SELECT sum(result_id) FROM results");
  const ProgramRun again = run_overtone(screen_arguments(input, full), folder);
  ASSERT_EQ(again.status, 0) << again.err;
  EXPECT_NE(again.out.find(fmt::format("{} already done, 0 computed now", small_set_molecules)),
            std::string::npos)
      << again.out;
  EXPECT_EQ(count_rows(full, "SELECT sum(result_id) FROM results"), id_sum);
  EXPECT_EQ(count_rows(full, "SELECT count(*) FROM runs"), 1);
}

TEST(ScreenRuns, BadRecordsAreRecordedAsFailuresAndEveryGoodMoleculeIsDone) {
  const fs::path folder = scratch_folder("bad");
  const fs::path store = folder / "bad.sqlite";
  const std::string sdf = screen_data("bad-records.sdf");
  const ProgramRun run = run_overtone(
      {"screen", sdf, screen_data("bad-records.smi"), "--store", store.string(), "--progress", "none"},
      folder);
  ASSERT_EQ(run.status, 0) << run.err;
  std::map<std::string, std::pair<std::string, std::string>> outcome;  // name -> status, stage
  {
    SQLite::Database db(store.string(), SQLite::OPEN_READONLY);
    SQLite::Statement query(
        db,
        "SELECT molecules.name, results.status, COALESCE(results.failed_stage, '') FROM results "
        "JOIN molecules USING (molecule_id)");
    while (query.executeStep())
      outcome[query.getColumn(0).getString()] = {query.getColumn(1).getString(),
                                                 query.getColumn(2).getString()};
  }
  // "Xx" is no element (IUPAC periodic table): the record cannot be read.
  EXPECT_EQ(outcome["unknown_element"], std::make_pair(std::string("failed"), std::string("read")));
  // The third record holds nothing between its "$$$$" lines (CTfile SDF delimiter); it has
  // no name, so its id is file#record.
  EXPECT_EQ(outcome[sdf + "#3"], std::make_pair(std::string("failed"), std::string("read")));
  // MMFF94 has no parameters for platinum (Halgren, J. Comput. Chem. 17, 490 (1996):
  // H, C, N, O, F, Si, P, S, Cl, Br, I and a few ions).
  EXPECT_EQ(outcome["cisplatin_untypable_metal"],
            std::make_pair(std::string("failed"), std::string("potential")));
  // An unclosed ring bond and branch are not SMILES (OpenSMILES specification).
  EXPECT_EQ(outcome["broken_smiles"], std::make_pair(std::string("failed"), std::string("read")));
  for (const char* good : {"ethanol", "acetic_acid", "methanol", "formic_acid"})
    EXPECT_EQ(outcome[good], std::make_pair(std::string("done"), std::string())) << good;
  EXPECT_EQ(outcome.size(), 8u);

  const ProgramRun report = run_overtone({"screen-report", store.string()}, folder);
  ASSERT_EQ(report.status, 0) << report.err;
  EXPECT_NE(report.out.find("failures: 4"), std::string::npos) << report.out;
  const ProgramRun table = run_overtone({"screen-report", store.string(), "--table", "failures"}, folder);
  ASSERT_EQ(table.status, 0) << table.err;
  EXPECT_EQ(std::count(table.out.begin(), table.out.end(), '\n'), 1 + 4) << table.out;  // header + failures
}

TEST(ScreenRuns, MoleculeOverTheTimeLimitIsRecordedWithItsStage) {
  const fs::path folder = scratch_folder("timeout");
  // Lidocaine (39 atoms, 111 modes): its default stages take over 20 s on MMFF94 (measured),
  // so a 50 ms limit is passed on any machine however fast; only the time matters here.
  std::ofstream(folder / "slow.smi") << "CCN(CC)CC(=O)Nc1c(C)cccc1C lidocaine\n";
  const fs::path store = folder / "slow.sqlite";
  const ProgramRun run =
      run_overtone(screen_arguments((folder / "slow.smi").string(), store, {"--timeout", "0.05"}), folder);
  ASSERT_EQ(run.status, 0) << run.err;
  SQLite::Database db(store.string(), SQLite::OPEN_READONLY);
  SQLite::Statement query(db, "SELECT status, failed_stage, message FROM results");
  ASSERT_TRUE(query.executeStep());
  EXPECT_EQ(query.getColumn(0).getString(), "failed");
  EXPECT_NE(query.getColumn(2).getString().find("exceeded the time limit of 0.05 s"), std::string::npos)
      << query.getColumn(2).getString();
}

TEST(ScreenRuns, MpiStoreEqualsSingleProcessStore) {
  const std::string launcher = OVERTONE_MPIEXEC;
  if (!OVERTONE_MPI_BUILT || launcher.empty() || !fs::exists(launcher))
    GTEST_SKIP()
        << "overtone was built without MPI (install openmpi-bin and libopenmpi-dev, see tools/setup)";
  const fs::path folder = scratch_folder("mpi");
  const std::string input = small_subset(folder, 10).string();
  const fs::path single = folder / "single.sqlite";
  const ProgramRun one =
      run_overtone(screen_arguments(input, single, {"--isotope-rule", "C(=O)=13"}), folder);
  ASSERT_EQ(one.status, 0) << one.err;
  const fs::path parallel = folder / "mpi.sqlite";
  // Root may start ranks only with --allow-run-as-root; 3 ranks on 2 cores need --oversubscribe.
  const ProgramRun mpi =
      run_program({launcher, "--allow-run-as-root", "--oversubscribe", "-n", "3", OVERTONE_BINARY, "screen",
                   input, "--store", parallel.string(), "--progress", "none", "--isotope-rule", "C(=O)=13"},
                  folder);
  ASSERT_EQ(mpi.status, 0) << mpi.out << mpi.err;
  EXPECT_NE(mpi.out.find("2 mpi ranks"), std::string::npos) << mpi.out;
  EXPECT_EQ(store_dump(parallel), store_dump(single));
}

TEST(ScreenRuns, ShardsMergedEqualTheWholeScreen) {
  const fs::path folder = scratch_folder("shards");
  const std::string input = small_subset(folder, 8).string();
  const fs::path whole = folder / "whole.sqlite";
  ASSERT_EQ(run_overtone(screen_arguments(input, whole), folder).status, 0);
  std::vector<std::string> parts;
  long long shard_total = 0;
  for (int shard = 1; shard <= 3; ++shard) {
    const fs::path part = folder / fmt::format("part{}.sqlite", shard);
    const ProgramRun run =
        run_overtone(screen_arguments(input, part, {"--shard", fmt::format("{}/3", shard)}), folder);
    ASSERT_EQ(run.status, 0) << run.err;
    shard_total += count_rows(part, "SELECT count(*) FROM results");
    parts.push_back(part.string());
  }
  EXPECT_EQ(shard_total, 8);  // every molecule in exactly one shard
  const fs::path merged = folder / "merged.sqlite";
  std::vector<std::string> merge = {"merge-stores", merged.string()};
  merge.insert(merge.end(), parts.begin(), parts.end());
  ASSERT_EQ(run_overtone(merge, folder).status, 0);
  EXPECT_EQ(store_dump(merged), store_dump(whole));
  // Merging again adds nothing (deduplicated by settings and content hashes).
  const ProgramRun again = run_overtone({"merge-stores", merged.string(), whole.string()}, folder);
  ASSERT_EQ(again.status, 0) << again.err;
  EXPECT_NE(again.out.find("0 results added"), std::string::npos) << again.out;
  EXPECT_EQ(store_dump(merged), store_dump(whole));

  // screen-report --window: every listed resonance has its upper level in the window, and
  // the list is what the schema's own query gives.
  const ProgramRun report =
      run_overtone({"screen-report", whole.string(), "--window", "1000:2000", "--csv", "-"}, folder);
  ASSERT_EQ(report.status, 0) << report.err;
  std::istringstream rows(report.out);
  std::string row;
  std::getline(rows, row);  // header
  long long listed = 0;
  while (std::getline(rows, row)) {
    ++listed;
    std::vector<std::string> fields;
    std::istringstream split(row);
    for (std::string field; std::getline(split, field, ',');) fields.push_back(field);
    ASSERT_GE(fields.size(), 11u) << row;
    const double band = std::stod(fields[9].empty() ? fields[10] : fields[9]);
    EXPECT_GE(band, 1000.0);
    EXPECT_LE(band, 2000.0);
  }
  EXPECT_EQ(listed, count_rows(whole,
                               "SELECT count(*) FROM resonances WHERE flagged = 1 AND COALESCE(band_cm1, "
                               "upper_harmonic_cm1) BETWEEN 1000 AND 2000"));
}

// The numbers of the analyze command's analysis.json for one molecule.
nlohmann::json analyze_document(const std::string& molecule, const std::vector<std::string>& extra,
                                const fs::path& folder, const std::string& name) {
  std::vector<std::string> arguments = {"analyze", molecule, "--no-families", "--out",
                                        (folder / name).string()};
  arguments.insert(arguments.end(), extra.begin(), extra.end());
  const ProgramRun run = run_overtone(arguments, folder);
  EXPECT_EQ(run.status, 0) << run.err;
  return nlohmann::json::parse(file_text(folder / name / "analysis.json"));
}

void expect_close(double screened, double analyzed, const std::string& what) {
  EXPECT_NEAR(screened, analyzed, same_computation_tolerance * std::max(1.0, std::abs(analyzed))) << what;
}

// Compares one result of the store with analyze's document: modes, point group, x matrix,
// VPT2 fundamentals and every resonance candidate.
void expect_result_equals_document(SQLite::Database& db, const std::string& variant,
                                   const nlohmann::json& document) {
  SQLite::Statement result(
      db, "SELECT result_id, point_group, x_matrix_cm1, energy_kcal_mol FROM results WHERE variant = ?");
  result.bind(1, variant);
  ASSERT_TRUE(result.executeStep()) << variant;
  const long long id = result.getColumn(0).getInt64();
  EXPECT_EQ(result.getColumn(1).getString(), document.at("point_group").get<std::string>());
  expect_close(result.getColumn(3).getDouble(), document.at("optimization").at("energy").get<double>(),
               "energy");
  const nlohmann::json x = nlohmann::json::parse(result.getColumn(2).getString());
  const nlohmann::json& x_document = document.at("anharmonicity").at("x_cm1");
  ASSERT_EQ(x.size(), x_document.size());
  for (std::size_t i = 0; i < x.size(); ++i)
    for (std::size_t j = 0; j < x.size(); ++j)
      expect_close(x[i][j].get<double>(), x_document[i][j].get<double>(), fmt::format("x[{}][{}]", i, j));

  SQLite::Statement modes(db,
                          "SELECT mode, fundamental, species, harmonic_cm1, vpt2_cm1 FROM modes WHERE "
                          "result_id = ? ORDER BY mode");
  modes.bind(1, static_cast<int64_t>(id));
  std::size_t count = 0;
  std::map<int, double> fundamentals;
  for (const nlohmann::json& level : document.at("levels"))
    if (level.at("kind") == "fundamental")
      for (std::size_t q = 0; q < level.at("quanta").size(); ++q)
        if (level.at("quanta")[q] == 1)
          fundamentals[static_cast<int>(q) + 1] = level.at("anharmonic_cm1").get<double>();
  while (modes.executeStep()) {
    const nlohmann::json& mode = document.at("modes").at(count++);
    EXPECT_EQ(modes.getColumn(0).getInt(), mode.at("number").get<int>());
    EXPECT_EQ(modes.getColumn(1).getInt(), mode.at("fundamental").get<int>());
    EXPECT_EQ(modes.getColumn(2).getString(), mode.at("species").get<std::string>());
    expect_close(modes.getColumn(3).getDouble(), mode.at("frequency_cm1").get<double>(),
                 "harmonic wavenumber");
    expect_close(modes.getColumn(4).getDouble(), fundamentals.at(modes.getColumn(1).getInt()),
                 "vpt2 fundamental");
  }
  EXPECT_EQ(count, document.at("modes").size());

  SQLite::Statement resonances(
      db,
      "SELECT kind, gap_cm1, coupling_cm1, criterion_value, symmetry_allowed, flagged FROM "
      "resonances WHERE result_id = ? ORDER BY resonance");
  resonances.bind(1, static_cast<int64_t>(id));
  // The store keeps the flagged candidates and the symmetry-allowed near misses
  // (docs/screening.md); the document lists every candidate.
  const Vpt2Options thresholds;
  std::vector<nlohmann::json> stored;
  for (const nlohmann::json& resonance : document.at("resonances")) {
    const double threshold = resonance.at("kind") == "overtone-overtone"
                                 ? thresholds.darling_dennison_coupling_cm1
                                 : thresholds.fermi_criterion_cm1;
    if (resonance.at("flagged").get<bool>() ||
        (resonance.at("symmetry_allowed").get<bool>() &&
         (!resonance.at("criterion_value").is_number() ||  // null: an exact resonance, infinite criterion
          resonance.at("criterion_value").get<double>() >= stored_candidate_fraction * threshold)))
      stored.push_back(resonance);
  }
  ASSERT_FALSE(stored.empty());
  count = 0;
  while (resonances.executeStep()) {
    const nlohmann::json& resonance = stored.at(count++);
    EXPECT_EQ(resonances.getColumn(0).getString(), resonance.at("kind").get<std::string>());
    expect_close(resonances.getColumn(1).getDouble(), resonance.at("gap_cm1").get<double>(), "gap");
    expect_close(resonances.getColumn(2).getDouble(), resonance.at("coupling_cm1").get<double>(), "coupling");
    expect_close(resonances.getColumn(3).getDouble(), resonance.at("criterion_value").get<double>(),
                 "criterion");
    EXPECT_EQ(resonances.getColumn(4).getInt() != 0, resonance.at("symmetry_allowed").get<bool>());
    EXPECT_EQ(resonances.getColumn(5).getInt() != 0, resonance.at("flagged").get<bool>());
  }
  EXPECT_EQ(count, stored.size());
}

TEST(ScreenRuns, ScreenResultsEqualAnalyzeForTheSameMoleculeAndSettings) {
  const fs::path folder = scratch_folder("analyze");
  const std::string molecule = source_path("tests/data/formats/acetaldehyde.sdf");
  const fs::path store = folder / "one.sqlite";
  const ProgramRun run =
      run_overtone(screen_arguments(molecule, store, {"--isotope-rule", "C(=O)=13"}), folder);
  ASSERT_EQ(run.status, 0) << run.err;
  SQLite::Database db(store.string(), SQLite::OPEN_READONLY);
  // Acetaldehyde has one carbonyl carbon: the rule labels exactly one atom, which analyze
  // then gets as --isotope N=13.
  SQLite::Statement labelled(db, "SELECT labelled_atoms FROM results WHERE variant = 'C(=O)=13'");
  ASSERT_TRUE(labelled.executeStep());
  const std::string choice = labelled.getColumn(0).getString();
  ASSERT_EQ(choice.find(' '), std::string::npos) << choice;
  ASSERT_EQ(choice.substr(choice.find('=')), "=13") << choice;
  expect_result_equals_document(db, "", analyze_document(molecule, {}, folder, "parent"));
  expect_result_equals_document(db, "C(=O)=13",
                                analyze_document(molecule, {"--isotope", choice}, folder, "labelled"));
}

}  // namespace
}  // namespace overtone
