// The program on real molecule collections that nobody here wrote: every 3-D CML file
// of Debian's chemical-structures-data and the first 200 records of the NCI file in
// Debian's rdkit-data (2-D drawings without hydrogens), each through `overtone modes`
// on MMFF94, two at a time. Asserts that at least 99.5% succeed (exit 0 and a converged
// minimum), that every failure is one `overtone: error:` line naming a reason from the
// list documented in the README, that no structure is analysed without its hydrogens,
// and the point groups of a few molecules every spectroscopist knows. Prints the counts.
// Skipped with a message where a data package is missing (tools/setup installs both).
#include <gtest/gtest.h>
#include <openbabel/atom.h>
#include <openbabel/elements.h>
#include <openbabel/mol.h>
#include <openbabel/obconversion.h>
#include <openbabel/oberror.h>
#include <openbabel/obiter.h>
#include <unistd.h>

#include <algorithm>
#include <atomic>
#include <chrono>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <map>
#include <mutex>
#include <nlohmann/json.hpp>
#include <sstream>
#include <string>
#include <thread>
#include <vector>

namespace {

namespace fs = std::filesystem;

const std::string program = OVERTONE_BINARY;
const std::string structures_dir = "/usr/share/chemical-structures";
const std::string nci_file = "/usr/share/RDKit/Data/NCI/first_200.props.sdf";
constexpr int nci_records = 200;
// The issue of record: at least 99.5% of the molecules are analysed to a minimum.
constexpr double required_success_fraction = 0.995;
// The machine (and CI) has two cores.
constexpr int parallel_runs = 2;

// The reasons a failure may give, each with the phrase that identifies it in the
// message; README.md ("Errors") lists the same reasons.
const std::vector<std::pair<std::string, std::string>> documented_reasons = {
    {"force field cannot type the molecule", "cannot assign atom types"},
    {"force field cannot type the molecule", "has no atom type for atom"},
    {"potential not finite at the structure", "non-finite"},
    {"optimization diverged", "the optimization diverged"},
    {"3-d structure could not be built", "could not build a 3-d structure"},
    {"overlapping atoms", "closer than the physical minimum"},
    {"absurd potential constants", "far above any molecular vibration"},
};

struct ProgramRun {
  std::string name;  // file name without folder, or "NCI record N"
  std::string path;
  int status = -1;
  std::string out;
  std::string err;
};

std::string slurp(const std::string& path) {
  std::ifstream in(path);
  std::stringstream buffer;
  buffer << in.rdbuf();
  return buffer.str();
}

std::string work_folder() {
  const std::string folder = ::testing::TempDir() + "overtone-realset-" + std::to_string(getpid());
  fs::create_directories(folder);
  return folder;
}

// Runs `overtone modes FILE --potential MMFF94 --json -` on every input, parallel_runs at a time.
void run_all(std::vector<ProgramRun>& runs, const std::string& folder) {
  std::atomic<std::size_t> next{0};
  auto worker = [&] {
    for (std::size_t k = next++; k < runs.size(); k = next++) {
      ProgramRun& run = runs[k];
      const std::string base = folder + "/run-" + std::to_string(k);
      const std::string command = program + " modes '" + run.path + "' --potential MMFF94 --json - >" + base +
                                  ".out 2>" + base + ".err";
      const int raw = std::system(command.c_str());
      run.status = WIFEXITED(raw) ? WEXITSTATUS(raw) : -1;
      run.out = slurp(base + ".out");
      run.err = slurp(base + ".err");
    }
  };
  std::vector<std::thread> threads;
  for (int t = 0; t < parallel_runs; ++t) threads.emplace_back(worker);
  for (auto& thread : threads) thread.join();
}

std::vector<std::string> lines_of(const std::string& text) {
  std::vector<std::string> lines;
  std::istringstream in(text);
  for (std::string line; std::getline(in, line);) lines.push_back(line);
  return lines;
}

// The formula a complete structure of the record has, from Open Babel (a general-purpose
// chemistry library) reading the file on its own: hydrogens the file leaves implicit are
// counted. A 3-D record that lists hydrogens but leaves an atom short of its valence
// (a nitro group written without its charges) is analysed as given, so its formula is
// that of the atoms listed.
std::string expected_formula(const std::string& path) {
  OpenBabel::obErrorLog.SetOutputLevel(OpenBabel::obError);
  OpenBabel::OBConversion conversion;
  conversion.SetInFormat(conversion.FormatFromExt(path));
  OpenBabel::OBMol mol;
  std::ifstream in(path);
  if (!conversion.Read(&mol, &in)) return "unreadable";
  bool listed_hydrogens = false;
  std::map<std::string, int> listed;
  FOR_ATOMS_OF_MOL(atom, mol) {
    listed_hydrogens |= atom->GetAtomicNum() == 1;
    ++listed[OpenBabel::OBElements::GetSymbol(atom->GetAtomicNum())];
  }
  if (listed_hydrogens && mol.GetDimension() == 3) {
    // Hill order: C, H, then the rest alphabetically (std::map order).
    std::string formula;
    auto add = [&](const std::string& symbol, int count) {
      formula += symbol + (count > 1 ? std::to_string(count) : "");
    };
    if (listed.count("C")) add("C", listed["C"]);
    if (listed.count("C") && listed.count("H")) add("H", listed["H"]);
    for (const auto& [symbol, count] : listed)
      if (!listed.count("C") || (symbol != "C" && symbol != "H")) add(symbol, count);
    return formula;
  }
  std::string formula = mol.GetFormula();
  while (!formula.empty() && (formula.back() == '+' || formula.back() == '-')) formula.pop_back();
  return formula;
}

std::vector<ProgramRun> chemical_structures() {
  std::vector<ProgramRun> runs;
  for (const auto& entry : fs::recursive_directory_iterator(structures_dir))
    if (entry.is_regular_file() && entry.path().extension() == ".cml")
      runs.push_back(
          ProgramRun{fs::relative(entry.path(), structures_dir).string(), entry.path().string(), -1, {}, {}});
  std::sort(runs.begin(), runs.end(),
            [](const ProgramRun& a, const ProgramRun& b) { return a.path < b.path; });
  return runs;
}

// One file per record (the program analyses the first structure of a file).
std::vector<ProgramRun> nci_records_split(const std::string& folder) {
  std::ifstream in(nci_file);
  std::vector<ProgramRun> runs;
  std::string record, line;
  while (std::getline(in, line) && static_cast<int>(runs.size()) < nci_records) {
    record += line + "\n";
    if (line.rfind("$$$$", 0) == 0) {
      const std::string path = folder + "/nci-" + std::to_string(runs.size() + 1) + ".sdf";
      std::ofstream(path) << record;
      runs.push_back(ProgramRun{"NCI record " + std::to_string(runs.size() + 1), path, -1, {}, {}});
      record.clear();
    }
  }
  return runs;
}

struct Tally {
  int succeeded = 0;
  int not_converged = 0;
  int conformer_notes = 0;
  int completed_inputs = 0;  // drawings or hydrogen-less records completed on reading
  std::map<std::string, std::vector<std::string>> failures_by_reason;
  std::vector<std::string> not_converged_names;
};

// Checks one set and prints its counts; returns the number of molecules that succeeded.
Tally check_set(const std::string& set_name, std::vector<ProgramRun>& runs, const std::string& folder,
                std::map<std::string, std::string>* point_groups) {
  const auto start = std::chrono::steady_clock::now();
  run_all(runs, folder);
  const double seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  Tally tally;
  for (const ProgramRun& run : runs) {
    SCOPED_TRACE(set_name + ": " + run.name);
    std::vector<std::string> error_lines, other_lines;
    for (const std::string& line : lines_of(run.err))
      (line.rfind("overtone: error: ", 0) == 0 ? error_lines : other_lines).push_back(line);
    for (const std::string& line : other_lines)
      EXPECT_EQ(line.rfind("overtone: warning: ", 0), 0u) << "unexpected line on stderr: " << line;
    if (run.status != 0) {
      EXPECT_EQ(run.status, 1) << run.err;
      EXPECT_EQ(error_lines.size(), 1u) << run.err;
      if (error_lines.empty()) continue;
      std::string reason;
      for (const auto& [name, phrase] : documented_reasons)
        if (error_lines.front().find(phrase) != std::string::npos) {
          reason = name;
          break;
        }
      EXPECT_FALSE(reason.empty()) << "not a documented reason: " << error_lines.front();
      tally.failures_by_reason[reason.empty() ? "undocumented" : reason].push_back(run.name + ": " +
                                                                                   error_lines.front());
      continue;
    }
    EXPECT_TRUE(error_lines.empty()) << run.err;
    nlohmann::json document;
    try {
      document = nlohmann::json::parse(run.out);
    } catch (const std::exception& error) {
      ADD_FAILURE() << "output is not JSON: " << error.what();
      continue;
    }
    // No structure is analysed without its hydrogens.
    EXPECT_EQ(document["molecule"]["formula"].get<std::string>(), expected_formula(run.path));
    for (const std::string& line : other_lines)
      if (line.find("hydrogen atom(s) implicit") != std::string::npos ||
          line.find("2-d drawing") != std::string::npos)
        ++tally.completed_inputs;
    for (const auto& warning : document["warnings"])
      if (warning.get<std::string>().find("local minimum") != std::string::npos) ++tally.conformer_notes;
    if (document["optimization"]["converged"].get<bool>()) {
      ++tally.succeeded;
      if (point_groups) (*point_groups)[run.name] = document["point_group"].get<std::string>();
    } else {
      ++tally.not_converged;
      tally.not_converged_names.push_back(run.name + ": " +
                                          document["optimization"]["message"].get<std::string>());
    }
  }
  std::cout << "[realset] " << set_name << ": " << runs.size() << " molecules in " << seconds << " s; "
            << tally.succeeded << " analysed to a minimum, " << tally.not_converged << " not converged, "
            << (runs.size() - tally.succeeded - tally.not_converged) << " refused with an error; "
            << tally.completed_inputs << " completed on reading (hydrogens added or 3-d built), "
            << tally.conformer_notes << " with a lower conformer noted\n";
  for (const auto& [reason, names] : tally.failures_by_reason) {
    std::cout << "[realset]   error, " << reason << " (" << names.size() << "):\n";
    for (const auto& name : names) std::cout << "[realset]     " << name << "\n";
  }
  for (const auto& name : tally.not_converged_names)
    std::cout << "[realset]   not converged: " << name << "\n";
  return tally;
}

bool data_present(std::string& missing) {
  if (!fs::is_directory(structures_dir))
    missing += structures_dir + " (Debian package chemical-structures-data) ";
  if (!fs::exists(nci_file)) missing += nci_file + " (Debian package rdkit-data) ";
  return missing.empty();
}

TEST(RealSet, ChemicalStructuresAndNciRecordsOnMmff94) {
  std::string missing;
  if (!data_present(missing)) GTEST_SKIP() << "missing " << missing << "; tools/setup installs them";
  const std::string folder = work_folder();
  std::vector<ProgramRun> cml = chemical_structures();
  std::vector<ProgramRun> nci = nci_records_split(folder);
  ASSERT_GT(cml.size(), 500u);  // the package ships about 570 CML files
  ASSERT_EQ(nci.size(), static_cast<std::size_t>(nci_records));

  std::map<std::string, std::string> point_groups;
  const Tally cml_tally = check_set("chemical-structures-data", cml, folder, &point_groups);
  const Tally nci_tally = check_set("rdkit-data NCI first 200", nci, folder, nullptr);

  const int total = static_cast<int>(cml.size() + nci.size());
  const int succeeded = cml_tally.succeeded + nci_tally.succeeded;
  std::cout << "[realset] total: " << succeeded << " of " << total << " analysed to a minimum ("
            << 100.0 * succeeded / total << "%)\n";
  EXPECT_GE(succeeded, required_success_fraction * total);

  // Point groups of molecules whose symmetry every textbook gives (Herzberg 1945,
  // common practice): benzene D6h, naphthalene D2h, methane Td, staggered ethane D3d,
  // ethene D2h.
  const std::map<std::string, std::string> known = {{"aromatics/benzene.cml", "D6h"},
                                                    {"polycyclic_aromatics/naphthalene.cml", "D2h"},
                                                    {"alkanes/methane.cml", "Td"},
                                                    {"alkanes/ethane.cml", "D3d"},
                                                    {"alkenes/ethene.cml", "D2h"}};
  for (const auto& [name, group] : known) {
    ASSERT_TRUE(point_groups.count(name)) << name << " was not analysed to a minimum";
    EXPECT_EQ(point_groups.at(name), group) << name;
  }
  fs::remove_all(folder);
}

}  // namespace
