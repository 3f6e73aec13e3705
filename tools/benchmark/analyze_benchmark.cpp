// End-to-end benchmark of `overtone analyze` with default settings: per molecule, the wall
// time of each stage (from the stage timings analysis.json records), the whole run's wall
// time and its peak resident memory (getrusage of the child process), and each stage's
// share of the run (the in-run baseline: a slower machine or a busier one moves all
// stages together, a stage that scales worse than the others stands out). Prints a table;
// no pass/fail.
//
// Usage: overtone-benchmark-analyze PROGRAM [NAME=SMILES ...] [-- EXTRA ANALYZE ARGUMENTS]
// (without NAME=SMILES: paracetamol and lidocaine).
#include <fcntl.h>
#include <fmt/format.h>
#include <spawn.h>
#include <sys/resource.h>
#include <sys/wait.h>
#include <unistd.h>

#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

extern char** environ;

namespace {

struct Case {
  std::string name;
  std::string smiles;
};

// Paracetamol (20 atoms, 54 modes) and lidocaine (39 atoms, 111 modes), a drug-like
// molecule of about forty atoms with a flexible amine chain and two methyl rotors.
const std::vector<Case> default_cases = {{"paracetamol", "CC(=O)Nc1ccc(O)cc1"},
                                         {"lidocaine", "CCN(CC)CC(=O)Nc1c(C)cccc1C"}};

struct Run {
  int status = -1;
  double wall_s = 0.0;
  long peak_rss_kb = 0;
};

// Runs the program and waits for it; the peak memory is that child's own (wait4).
Run run_program(const std::vector<std::string>& arguments, const std::string& log_path) {
  std::vector<char*> argv;
  for (const std::string& a : arguments) argv.push_back(const_cast<char*>(a.c_str()));
  argv.push_back(nullptr);
  posix_spawn_file_actions_t actions;
  posix_spawn_file_actions_init(&actions);
  posix_spawn_file_actions_addopen(&actions, STDOUT_FILENO, log_path.c_str(), O_WRONLY | O_CREAT | O_TRUNC,
                                   0644);
  posix_spawn_file_actions_adddup2(&actions, STDOUT_FILENO, STDERR_FILENO);
  Run run;
  const auto start = std::chrono::steady_clock::now();
  pid_t pid = 0;
  const int spawned = posix_spawn(&pid, argv[0], &actions, nullptr, argv.data(), environ);
  posix_spawn_file_actions_destroy(&actions);
  if (spawned != 0) return run;
  int status = 0;
  rusage usage{};
  if (wait4(pid, &status, 0, &usage) < 0) return run;
  run.wall_s = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  run.status = WIFEXITED(status) ? WEXITSTATUS(status) : -1;
  run.peak_rss_kb = usage.ru_maxrss;
  return run;
}

double number_at(const nlohmann::json& document, const nlohmann::json::json_pointer& where) {
  return document.contains(where) && document.at(where).is_number() ? document.at(where).get<double>() : -1.0;
}

void print_case(const Case& c, const Run& run, const nlohmann::json& document) {
  using pointer = nlohmann::json::json_pointer;
  fmt::print("{} ({} modes): exit {}, wall {:.2f} s, peak resident memory {:.1f} MB\n", c.name,
             document.contains("modes") ? document["modes"].size() : 0, run.status, run.wall_s,
             static_cast<double>(run.peak_rss_kb) / 1024.0);
  fmt::print("  {:<34} {:>10} {:>14}\n", "stage", "seconds", "share of run");
  const std::vector<std::pair<std::string, std::string>> stages = {
      {"optimize (with conformer search)", "/harmonic/stage_seconds/optimize"},
      {"Hessian", "/harmonic/stage_seconds/hessian"},
      {"normal modes", "/harmonic/stage_seconds/normal_modes"},
      {"symmetry", "/harmonic/stage_seconds/symmetry"},
      {"anharmonic: force constants", "/force_constants/seconds"},
      {"anharmonic: VPT2 and resonances", "/anharmonic_summary/seconds"},
      {"families", "/families_summary/seconds"}};
  double accounted = 0.0;
  for (const auto& [label, where] : stages) {
    const double seconds = number_at(document, pointer(where));
    if (seconds < 0.0) {
      fmt::print("  {:<34} {:>10}\n", label, "not run");
      continue;
    }
    accounted += seconds;
    fmt::print("  {:<34} {:>10.3f} {:>13.1f}%\n", label, seconds, 100.0 * seconds / run.wall_s);
  }
  fmt::print("  {:<34} {:>10.3f} {:>13.1f}%  (loading, 3-D build, reports, files)\n", "rest of the run",
             run.wall_s - accounted, 100.0 * (run.wall_s - accounted) / run.wall_s);
  if (document.contains("levels"))
    fmt::print("  {} levels, {} resonance candidates, {} polyads, {} families\n", document["levels"].size(),
               document.contains("resonances") ? document["resonances"].size() : 0,
               document.contains("polyads") ? document["polyads"].size() : 0,
               document.contains("families") ? document["families"].size() : 0);
}

}  // namespace

int main(int argc, char** argv) {
  if (argc < 2) {
    std::fprintf(stderr,
                 "usage: overtone-benchmark-analyze PROGRAM [NAME=SMILES ...] [-- ANALYZE ARGUMENTS]\n");
    return 1;
  }
  const std::string program = argv[1];
  std::vector<Case> cases;
  std::vector<std::string> extra;
  bool after_separator = false;
  for (int k = 2; k < argc; ++k) {
    const std::string argument = argv[k];
    if (after_separator) {
      extra.push_back(argument);
    } else if (argument == "--") {
      after_separator = true;
    } else {
      const auto equals = argument.find('=');
      if (equals == std::string::npos) {
        std::fprintf(stderr, "overtone-benchmark-analyze: expected NAME=SMILES, got '%s'\n",
                     argument.c_str());
        return 1;
      }
      cases.push_back({argument.substr(0, equals), argument.substr(equals + 1)});
    }
  }
  if (cases.empty()) cases = default_cases;
  const std::filesystem::path scratch =
      std::filesystem::temp_directory_path() / ("overtone-bench-analyze-" + std::to_string(getpid()));
  std::filesystem::create_directories(scratch);
  for (const Case& c : cases) {
    const std::string out = (scratch / c.name).string();
    std::vector<std::string> arguments = {program, "analyze", "smiles:" + c.smiles, "--out", out};
    arguments.insert(arguments.end(), extra.begin(), extra.end());
    const Run run = run_program(arguments, (scratch / (c.name + ".log")).string());
    nlohmann::json document;
    std::ifstream file(out + "/analysis.json");
    if (file) document = nlohmann::json::parse(file, nullptr, false);
    if (run.status != 0 || document.is_discarded())
      fmt::print("{}: the run failed (exit {}); its output: {}\n", c.name, run.status,
                 (scratch / (c.name + ".log")).string());
    else
      print_case(c, run, document);
  }
  std::error_code ignored;
  if (!std::getenv("OVERTONE_KEEP_BENCH_OUTPUT")) std::filesystem::remove_all(scratch, ignored);
  return 0;
}
