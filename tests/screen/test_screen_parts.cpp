// The parts of a screen: worker processes (results, crashes, endless loops), input
// records (CTfile, MOL2, XYZ, SMILES files, RFC 4180 CSV), isotope rules (which atoms a
// rule picks, and the Teller–Redlich product rule for the isotopologue it makes), the
// store (schema version, write-ahead log, runs by settings hash).
#include <gtest/gtest.h>
#include <signal.h>

#include <Eigen/Eigenvalues>
#include <chrono>
#include <cmath>
#include <thread>

#include "core/error.hpp"
#include "molecule/read_molecule.hpp"
#include "molecule/read_records.hpp"
#include "pipeline/analysis.hpp"
#include "potential/make_potential.hpp"
#include "screen/inputs.hpp"
#include "screen/isotope_rules.hpp"
#include "screen/process_pool.hpp"
#include "screen/screen_molecule.hpp"
#include "screen/settings.hpp"
#include "screen/store.hpp"
#include "screen_test_helpers.hpp"

namespace overtone {
namespace {

using namespace overtone::testing;
namespace fs = std::filesystem;

// Waiting for children: generous, the machine may be busy (s).
constexpr double child_wait_s = 60.0;
// The Teller–Redlich product rule holds exactly for one Hessian; parent and isotopologue
// are optimized and symmetrized separately (their point groups may differ), which moves
// the geometry by far less than 1e-6 Å and the Hessian by a relative 1e-9 or so.
constexpr double product_rule_tolerance = 1e-6;

std::vector<FinishedChild> wait_all(ProcessPool& pool) {
  std::vector<FinishedChild> finished;
  const auto start = std::chrono::steady_clock::now();
  while (pool.running() > 0 &&
         std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count() < child_wait_s)
    for (FinishedChild& child : pool.wait(1.0)) finished.push_back(std::move(child));
  return finished;
}

TEST(ProcessPool, ChildResultsArriveWhateverTheirSize) {
  ProcessPool pool(2, 0.0);
  // Larger than a pipe's buffer (64 KiB on Linux, pipe(7)): the parent must read while the
  // child writes.
  const std::size_t large = 1 << 20;
  pool.start(0, [](const auto& stage) {
    stage("first");
    return std::string("small");
  });
  pool.start(1, [large](const auto& stage) {
    stage("second");
    return std::string(large, 'x');
  });
  std::vector<FinishedChild> finished = wait_all(pool);
  ASSERT_EQ(finished.size(), 2u);
  std::sort(finished.begin(), finished.end(), [](const auto& a, const auto& b) { return a.task < b.task; });
  EXPECT_EQ(finished[0].ending, ChildEnding::completed);
  EXPECT_EQ(finished[0].result, "small");
  EXPECT_EQ(finished[0].last_stage, "first");
  EXPECT_EQ(finished[1].ending, ChildEnding::completed);
  EXPECT_EQ(finished[1].result.size(), large);
  EXPECT_EQ(finished[1].last_stage, "second");
}

TEST(ProcessPool, CrashesAbortsExceptionsAndEndlessLoopsStayInTheirChild) {
  ProcessPool pool(4, 1.0);
  pool.start(0, [](const auto& stage) -> std::string {
    stage("segfault");
    raise(SIGSEGV);
    return "unreachable";
  });
  pool.start(1, [](const auto& stage) -> std::string {
    stage("abort");
    std::abort();
  });
  pool.start(2, [](const auto& stage) -> std::string {
    stage("throw");
    throw Error("bad input inside a child");
  });
  pool.start(3, [](const auto& stage) -> std::string {
    stage("loop");
    for (volatile unsigned long i = 0;; i = i + 1) {
    }
  });
  std::vector<FinishedChild> finished = wait_all(pool);
  ASSERT_EQ(finished.size(), 4u);
  std::sort(finished.begin(), finished.end(), [](const auto& a, const auto& b) { return a.task < b.task; });
  EXPECT_EQ(finished[0].ending, ChildEnding::crashed);
  EXPECT_NE(finished[0].detail.find("signal 11"), std::string::npos) << finished[0].detail;
  EXPECT_EQ(finished[0].last_stage, "segfault");
  EXPECT_EQ(finished[1].ending, ChildEnding::crashed);
  EXPECT_NE(finished[1].detail.find("signal 6"), std::string::npos) << finished[1].detail;
  EXPECT_EQ(finished[2].ending, ChildEnding::failed);
  EXPECT_EQ(finished[2].detail, "bad input inside a child");
  EXPECT_EQ(finished[3].ending, ChildEnding::timed_out);
  EXPECT_EQ(finished[3].last_stage, "loop");
  EXPECT_GE(finished[3].seconds, 1.0);
  // The parent is fine and the pool takes new work.
  pool.start(4, [](const auto&) { return std::string("after"); });
  finished = wait_all(pool);
  ASSERT_EQ(finished.size(), 1u);
  EXPECT_EQ(finished[0].result, "after");
}

std::string write_file(const fs::path& path, const std::string& text) {
  std::ofstream(path) << text;
  return path.string();
}

// CTfile formats (BIOVIA, 2020): an SD file is molfiles each followed by data items and a
// "$$$$" line; the first molfile line is the name.
TEST(InputRecords, SdfRecordsKeepNamesEmptyRecordsAndHashTheMoleculeBlockOnly) {
  const fs::path folder = scratch_folder("sdf-records");
  const std::string one = file_text(source_path("tests/data/formats/acetaldehyde.sdf"));
  const std::string block = one.substr(one.find('\n') + 1, one.find("M  END") - one.find('\n') - 1);
  const std::string text = "acetaldehyde\n" + block + "M  END\n>  <NOTE>\nfirst\n\n$$$$\n" + "$$$$\n" +
                           "another name\n" + block + "M  END\n>  <NOTE>\nsecond copy\n\n$$$$\n" + "\n" +
                           block + "M  END\n$$$$\n";
  const std::string path = write_file(folder / "set.sdf", text);
  const std::vector<MoleculeFileRecord> records = read_records(path);
  ASSERT_EQ(records.size(), 4u);
  EXPECT_EQ(records[0].name, "acetaldehyde");
  EXPECT_EQ(records[1].text, "$$$$\n");  // the empty record is kept, to fail on its own
  EXPECT_EQ(records[2].name, "another name");
  EXPECT_EQ(records[3].name, "");
  const CollectedInputs collected = collect_records({path});
  // Same molecule block three times under other names and data: one content.
  EXPECT_EQ(collected.listed, 4u);
  EXPECT_EQ(collected.duplicates, 2u);
  ASSERT_EQ(collected.records.size(), 2u);
  EXPECT_EQ(collected.records[0].id, "acetaldehyde");
  EXPECT_EQ(collected.records[1].id, path + "#2");
}

// Tripos MOL2: each molecule starts at "@<TRIPOS>MOLECULE", the next line is its name.
// XYZ: atom count, comment (the name), one line per atom.
TEST(InputRecords, Mol2AndXyzFilesSplitIntoTheirMolecules) {
  const fs::path folder = scratch_folder("mol2-xyz");
  const std::string mol2 = file_text(source_path("tests/data/formats/acetaldehyde.mol2"));
  const std::string mol2_path = write_file(folder / "two.mol2", mol2 + mol2);
  const std::vector<MoleculeFileRecord> mol2_records = read_records(mol2_path);
  ASSERT_EQ(mol2_records.size(), 2u);
  EXPECT_EQ(mol2_records[0].content, mol2_records[1].content);
  const std::string xyz =
      "3\nwater\nO 0 0 0.1173\nH 0 0.7572 -0.4692\nH 0 -0.7572 -0.4692\n"
      "1\nlone atom\nHe 0 0 0\n";
  const std::vector<MoleculeFileRecord> xyz_records = read_records(write_file(folder / "two.xyz", xyz));
  ASSERT_EQ(xyz_records.size(), 2u);
  EXPECT_EQ(xyz_records[0].name, "water");
  EXPECT_EQ(xyz_records[1].name, "lone atom");
  EXPECT_EQ(xyz_records[1].text, "1\nlone atom\nHe 0 0 0\n");
}

TEST(InputRecords, SmilesFilesCsvFilesAndDirectories) {
  const fs::path folder = scratch_folder("smiles-csv");
  fs::create_directories(folder / "set" / "sub");
  write_file(folder / "set" / "a.smi", "# a comment\nCCO ethanol\n\nC=O\tformaldehyde gas\nO\n");
  // RFC 4180: quoted fields may hold commas and doubled quotes.
  write_file(folder / "set" / "sub" / "b.csv",
             "Name,SMILES,note\n\"acid, acetic\",CC(=O)O,x\nwater,O,\"say \"\"hi\"\"\"\n");
  write_file(folder / "set" / "notes.txt", "not a molecule file\n");
  InputOptions options;
  options.smiles_column = "SMILES";
  options.id_column = "name";  // compared without case
  const CollectedInputs collected = collect_records({(folder / "set").string()}, options);
  ASSERT_EQ(collected.records.size(), 4u);  // water appears twice: once by content
  EXPECT_EQ(collected.duplicates, 1u);
  EXPECT_EQ(collected.records[0].id, "ethanol");
  EXPECT_EQ(collected.records[0].text, "CCO");
  EXPECT_EQ(collected.records[1].id, "formaldehyde gas");
  EXPECT_EQ(collected.records[2].id, (folder / "set" / "a.smi").string() + "#5");
  EXPECT_EQ(collected.records[3].id, "acid, acetic");
  EXPECT_EQ(collected.records[3].text, "CC(=O)O");
  EXPECT_EQ(collected.warnings.size(), 1u);  // notes.txt skipped with a word
  InputOptions wrong = options;
  wrong.smiles_column = "smiles_string";
  EXPECT_THROW(collect_records({(folder / "set" / "sub" / "b.csv").string()}, wrong), Error);
  EXPECT_THROW(collect_records({(folder / "missing.sdf").string()}), Error);
}

TEST(ScreenSettings, HashNamesTheSettingsNotTheExecution) {
  ScreenSettings settings;
  const std::string base = settings_hash(settings_json(settings));
  EXPECT_EQ(base, settings_hash(settings_json(settings)));
  EXPECT_EQ(base.size(), 64u);  // SHA-256 in hexadecimal (FIPS 180-4)
  ScreenSettings other = settings;
  other.potential = "UFF";
  EXPECT_NE(settings_hash(settings_json(other)), base);
  other = settings;
  other.stages = ScreenStages::harmonic;
  EXPECT_NE(settings_hash(settings_json(other)), base);
  other = settings;
  other.family_quanta = 5;  // families settings do not matter below the families stage
  EXPECT_EQ(settings_hash(settings_json(other)), base);
  other.stages = ScreenStages::families;
  ScreenSettings families = settings;
  families.stages = ScreenStages::families;
  EXPECT_NE(settings_hash(settings_json(other)), settings_hash(settings_json(families)));
  other = settings;
  other.family_quanta = 0.0;
  EXPECT_THROW(other.validate(), Error);
  EXPECT_NO_THROW(ScreenSettings{}.validate());
}

TEST(ScreenSettings, Vpt2ExclusionIsANewRunAndTheDefaultKeepsOldHashes) {
  const ScreenSettings settings;
  // Stores written before the exclusion existed hold runs without the key: the default
  // (no exclusion) must leave the settings document as it was.
  EXPECT_FALSE(settings_json(settings).contains("vpt2_exclude_below_cm1"));
  ScreenSettings excluded = settings;
  excluded.vpt2_exclude_below_cm1 = 200.0;
  EXPECT_NE(settings_hash(settings_json(excluded)), settings_hash(settings_json(settings)));
  excluded.stages = ScreenStages::harmonic;  // no VPT2 below the anharmonic stage
  ScreenSettings harmonic = settings;
  harmonic.stages = ScreenStages::harmonic;
  EXPECT_EQ(settings_hash(settings_json(excluded)), settings_hash(settings_json(harmonic)));
  excluded.vpt2_exclude_below_cm1 = -1.0;
  EXPECT_THROW(excluded.validate(), Error);
}

TEST(IsotopeRules, SyntaxErrorsAreRefusedWithTheRule) {
  EXPECT_THROW(parse_isotope_rule(""), Error);
  EXPECT_THROW(parse_isotope_rule("C(=O)"), Error);    // no mass number
  EXPECT_THROW(parse_isotope_rule("C(=O)=x"), Error);  // not a number
  EXPECT_THROW(parse_isotope_rule("C(=O)=0"), Error);  // no mass number 0
  EXPECT_THROW(parse_isotope_rule("C(=O=13"), Error);  // not SMARTS
  EXPECT_THROW(parse_isotope_rule("H@=2"), Error);     // no pattern
  const IsotopeRule rule = parse_isotope_rule("  C(=O)=13   C=[O:1]=18 ");
  EXPECT_EQ(rule.text, "C(=O)=13 C=[O:1]=18");
  ASSERT_EQ(rule.substitutions.size(), 2u);
  EXPECT_EQ(rule.substitutions[1].smarts, "C=[O:1]");
  EXPECT_EQ(rule.substitutions[1].mass_number, 18);
  EXPECT_TRUE(parse_isotope_rule("H@[O,N;!H0]=2").substitutions[0].hydrogens_of_targets);
}

Molecule molecule_from_smiles(const std::string& smiles) {
  ReadOptions options;
  options.input_is_smiles = true;
  return read_molecule(smiles, options).molecule;
}

std::vector<int> labelled_elements(const std::string& rule, const Molecule& molecule, int mass_number) {
  std::vector<int> elements;
  for (const IsotopeChoice& choice : isotope_choices(parse_isotope_rule(rule), molecule)) {
    EXPECT_EQ(choice.mass_number, mass_number);
    elements.push_back(molecule.atoms.at(static_cast<std::size_t>(choice.atom_number - 1)).atomic_number);
  }
  return elements;
}

// Which atoms the three rules of the screening docs pick on a small series; the counts are
// facts of the structural formulas (common practice, no source): a carbonyl carbon and
// oxygen in each of acetone, acetic acid and acetamide, none in ethanol; exchangeable
// (O–H, N–H) hydrogens: none, one, two and one.
TEST(IsotopeRules, CarbonylAndExchangeableHydrogenRulesPickTheRightAtomsOnASeries) {
  constexpr int carbon = 6, oxygen = 8, hydrogen = 1;
  struct Case {
    const char* smiles;
    std::size_t carbonyls;
    std::size_t exchangeable;
  };
  for (const Case& c :
       {Case{"CC(C)=O", 1, 0}, Case{"CC(=O)O", 1, 1}, Case{"CC(N)=O", 1, 2}, Case{"CCO", 0, 1}}) {
    const Molecule molecule = molecule_from_smiles(c.smiles);
    EXPECT_EQ(labelled_elements("C(=O)=13", molecule, 13), std::vector<int>(c.carbonyls, carbon)) << c.smiles;
    EXPECT_EQ(labelled_elements("C=[O:1]=18", molecule, 18), std::vector<int>(c.carbonyls, oxygen))
        << c.smiles;
    EXPECT_EQ(labelled_elements("H@[O,N;!H0]=2", molecule, 2), std::vector<int>(c.exchangeable, hydrogen))
        << c.smiles;
  }
  // Two substitutions in one rule give one atom two mass numbers: refused.
  EXPECT_THROW(isotope_choices(parse_isotope_rule("C=O=13 [CX3]=14"), molecule_from_smiles("CC=O")), Error);
}

// Principal moments of inertia (Da Å²) of the analysed structure.
Eigen::Vector3d principal_moments(const HarmonicResult& harmonic) {
  const Eigen::Index n = harmonic.masses_da.size();
  Eigen::Vector3d center = Eigen::Vector3d::Zero();
  for (Eigen::Index a = 0; a < n; ++a)
    center += harmonic.masses_da[a] * harmonic.coordinates_angstrom.segment<3>(3 * a);
  center /= harmonic.masses_da.sum();
  Eigen::Matrix3d inertia = Eigen::Matrix3d::Zero();
  for (Eigen::Index a = 0; a < n; ++a) {
    const Eigen::Vector3d r = harmonic.coordinates_angstrom.segment<3>(3 * a) - center;
    inertia += harmonic.masses_da[a] * (r.squaredNorm() * Eigen::Matrix3d::Identity() - r * r.transpose());
  }
  return Eigen::SelfAdjointEigenSolver<Eigen::Matrix3d>(inertia).eigenvalues();
}

// Teller–Redlich product rule for a nonlinear molecule over all its vibrations (Wilson,
// Decius and Cross, Molecular Vibrations (1955), section 8-7):
//   Π ω'/ω = [Π_a (m_a/m'_a)]^{3/2} (M'/M)^{3/2} (I'_A I'_B I'_C / I_A I_B I_C)^{1/2}.
// It holds for any potential, so it checks that the rule put the masses where the
// isotopologue's analysis used them, and that the variant is computed on the parent's surface.
TEST(IsotopeRules, IsotopologueOfEachRuleObeysTheTellerRedlichProductRule) {
  ScreenSettings settings;
  settings.stages = ScreenStages::harmonic;
  for (const char* rule_text : {"C(=O)=13", "C=[O:1]=18", "H@[O,N;!H0]=2"}) {
    const IsotopeRule rule = parse_isotope_rule(rule_text);
    const Molecule parent = read_molecule(source_path("tests/data/formats/acetaldehyde.sdf")).molecule;
    const Molecule acid = molecule_from_smiles("CC(=O)O");
    const Molecule& molecule = rule.substitutions[0].hydrogens_of_targets ? acid : parent;
    Molecule labelled = molecule;
    const std::vector<IsotopeChoice> choices = isotope_choices(rule, molecule);
    ASSERT_FALSE(choices.empty()) << rule_text;
    apply_isotopes(labelled, choices);
    const auto potential = make_potential(default_force_field, molecule);
    const AnalysisResult a = analyze_molecule(molecule, *potential);
    const AnalysisResult b = analyze_molecule(labelled, *potential);
    const Eigen::VectorXd& w = a.harmonic.frequencies_cm1;
    const Eigen::VectorXd& w_labelled = b.harmonic.frequencies_cm1;
    ASSERT_EQ(w.size(), w_labelled.size());
    double log_frequencies = 0.0;
    for (Eigen::Index k = 0; k < w.size(); ++k) log_frequencies += std::log(w_labelled[k] / w[k]);
    double log_masses = 0.0;
    for (Eigen::Index k = 0; k < a.harmonic.masses_da.size(); ++k)
      log_masses += 1.5 * std::log(a.harmonic.masses_da[k] / b.harmonic.masses_da[k]);
    log_masses += 1.5 * std::log(b.harmonic.masses_da.sum() / a.harmonic.masses_da.sum());
    const Eigen::Vector3d moments = principal_moments(a.harmonic);
    const Eigen::Vector3d moments_labelled = principal_moments(b.harmonic);
    for (int axis = 0; axis < 3; ++axis) log_masses += 0.5 * std::log(moments_labelled[axis] / moments[axis]);
    EXPECT_NEAR(log_frequencies, log_masses, product_rule_tolerance) << rule_text;

    // The screen's variant is the same analysis: its harmonic wavenumbers and the shift
    // against the parent mode it overlaps most.
    ScreenTask task;
    task.record.id = "test";
    task.record.origin = "test#1";
    task.record.format = "smiles";
    task.record.text = molecule.source.rfind("smiles:", 0) == 0 ? molecule.source.substr(7) : "";
    if (task.record.text.empty()) {
      task.record.format = "sdf";
      task.record.text = file_text(source_path("tests/data/formats/acetaldehyde.sdf"));
    }
    task.variants = {"", rule.text};
    const MoleculeOutcome outcome = screen_molecule(task, settings, {rule});
    ASSERT_EQ(outcome.variants.size(), 2u);
    ASSERT_EQ(outcome.variants[1].status, status_done) << outcome.variants[1].message;
    for (const ScreenModeRow& row : outcome.variants[1].modes) {
      ASSERT_TRUE(row.shift_cm1 && row.parent_mode && row.labelled_share);
      // A heavier isotope never raises a wavenumber of the mode it follows by much; the
      // labelled atoms' share of kinetic energy lies in [0, 1].
      EXPECT_GE(*row.labelled_share, 0.0);
      EXPECT_LE(*row.labelled_share, 1.0 + 1e-12);
    }
  }
}

TEST(ScreenStore, SchemaVersionWriteAheadLogAndRunsBySettingsHash) {
  const fs::path folder = scratch_folder("store");
  const fs::path path = folder / "store.sqlite";
  {
    ScreenStore store(path.string());
    EXPECT_EQ(store.database().execAndGet("PRAGMA user_version").getInt(), screen_schema_version);
    EXPECT_EQ(store.database().execAndGet("PRAGMA journal_mode").getString(), "wal");
    const nlohmann::json settings = settings_json(ScreenSettings{});
    const long long run = store.ensure_run(settings, settings_hash(settings));
    EXPECT_EQ(store.ensure_run(settings, settings_hash(settings)), run);
    ScreenSettings other;
    other.potential = "UFF";
    const nlohmann::json other_settings = settings_json(other);
    EXPECT_NE(store.ensure_run(other_settings, settings_hash(other_settings)), run);

    ScreenRecord record;
    record.id = "x";
    record.origin = "x.smi#1";
    record.format = "smiles";
    record.text = "O";
    record.content_hash = smiles_content_hash("O");
    MoleculeOutcome failed = failed_outcome({""}, "read", "a reason");
    store.write_outcome(run, record, failed);
    EXPECT_EQ(store.result_statuses(run).at(record.content_hash).at(""), "failed");
    // Written again (a retry): replaced, not added.
    MoleculeOutcome done;
    done.formula = "H2O";
    done.atom_count = 3;
    done.variants.push_back(VariantOutcome{});
    done.variants[0].modes.push_back(ScreenModeRow{});
    store.write_outcome(run, record, done);
    EXPECT_EQ(store.result_statuses(run).at(record.content_hash).at(""), "done");
    EXPECT_EQ(store.database().execAndGet("SELECT count(*) FROM results").getInt(), 1);
    EXPECT_EQ(store.database().execAndGet("SELECT formula FROM molecules").getString(), "H2O");
  }
  // A file that is not a store is refused, and so is merging a store into itself.
  write_file(folder / "other.sqlite", "");
  {
    SQLite::Database other((folder / "other.sqlite").string(), SQLite::OPEN_READWRITE);
    other.exec("CREATE TABLE t (x)");
  }
  EXPECT_THROW(ScreenStore((folder / "other.sqlite").string()), Error);
  ScreenStore store(path.string());
  EXPECT_THROW(merge_store(store, path.string()), Error);
}

}  // namespace
}  // namespace overtone
