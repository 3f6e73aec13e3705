// Screening throughput: drug-sized molecules (the first N of the NCI set first_5K.smi in
// Debian's rdkit-data that MMFF94 can type) through the chosen stages. Prints molecules
// per second on 1 and on 2 worker processes for the same subset (their ratio against the
// target 1.8), the time of the whole set on 2 workers (target: under 10 minutes for 1000
// molecules), and the time of running the finished screen again (target: under 5 s), all
// in one process, with the machine's load average before and after.
//
// Usage: overtone-benchmark-screen [--count N] [--subset K] [--stages S] [--timeout S]
//                                  [--memory-limit MiB] [--input FILE.smi] [--folder DIR]
#include <fmt/format.h>
#include <openbabel/forcefield.h>
#include <openbabel/mol.h>
#include <openbabel/obconversion.h>
#include <sys/resource.h>
#include <unistd.h>

#include <algorithm>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <sstream>
#include <string>
#include <vector>

#include "molecule/openbabel_bridge.hpp"
#include "screen/screen.hpp"

namespace {

using namespace overtone;
namespace fs = std::filesystem;

constexpr const char* default_input = "/usr/share/RDKit/Data/NCI/first_5K.smi";
constexpr double target_ratio = 1.8;
constexpr double target_full_s_per_1000 = 600.0;
constexpr double target_resume_s = 5.0;

std::string load_average() {
  std::ifstream stream("/proc/loadavg");
  std::string one, five, fifteen;
  stream >> one >> five >> fifteen;
  return fmt::format("load average {} {} {} (1, 5, 15 min) on {} processors", one, five, fifteen,
                     sysconf(_SC_NPROCESSORS_ONLN));
}

// Whether MMFF94 assigns types to the molecule with its hydrogens (topology only).
bool mmff94_types(const std::string& smiles) {
  OpenBabel::OBConversion conversion;
  conversion.SetInFormat("smi");
  OpenBabel::OBMol mol;
  if (!conversion.ReadString(&mol, smiles) || mol.NumAtoms() == 0) return false;
  mol.AddHydrogens();
  OpenBabel::OBForceField* field = OpenBabel::OBForceField::FindForceField("MMFF94");
  return field && field->Setup(mol);
}

struct Selection {
  std::vector<std::string> lines;  // "SMILES name"
  int scanned = 0;
  int untyped = 0;
};

Selection select_molecules(const std::string& path, int count) {
  Selection selection;
  OpenBabelLogCapture quiet;
  run_openbabel_on_one_thread();
  std::ifstream stream(path);
  if (!stream) throw std::runtime_error("cannot read " + path + " (install rdkit-data: tools/setup)");
  std::string line;
  while (static_cast<int>(selection.lines.size()) < count && std::getline(stream, line)) {
    std::istringstream words(line);
    std::string smiles, name;
    words >> smiles >> name;
    if (smiles.empty()) continue;
    ++selection.scanned;
    if (!mmff94_types(smiles)) {
      ++selection.untyped;
      continue;
    }
    selection.lines.push_back(smiles + " nci-" + (name.empty() ? std::to_string(selection.scanned) : name));
  }
  return selection;
}

fs::path write_set(const fs::path& folder, const std::string& name, const std::vector<std::string>& lines,
                   std::size_t count) {
  const fs::path path = folder / name;
  std::ofstream out(path);
  for (std::size_t i = 0; i < count && i < lines.size(); ++i) out << lines[i] << "\n";
  return path;
}

struct Timed {
  ScreenSummary summary;
  double rate = 0.0;
  double cpu_s = 0.0;  // processor time of this process and its finished workers
};

// User + system time of this process and of every waited-for child so far (s).
double processor_seconds() {
  double total = 0.0;
  for (int who : {RUSAGE_SELF, RUSAGE_CHILDREN}) {
    rusage usage{};
    getrusage(who, &usage);
    total += static_cast<double>(usage.ru_utime.tv_sec + usage.ru_stime.tv_sec) +
             1e-6 * static_cast<double>(usage.ru_utime.tv_usec + usage.ru_stime.tv_usec);
  }
  return total;
}

Timed screen(const fs::path& input, const fs::path& store, int jobs, const ScreenRequest& base) {
  ScreenRequest request = base;
  request.inputs = {input.string()};
  request.store_path = store.string();
  request.jobs = jobs;
  Timed timed;
  const double cpu_start = processor_seconds();
  timed.summary = run_screen(request);
  timed.cpu_s = processor_seconds() - cpu_start;
  timed.rate =
      timed.summary.seconds > 0.0 ? static_cast<double>(timed.summary.computed) / timed.summary.seconds : 0.0;
  return timed;
}

void print_run(const std::string& what, const Timed& run) {
  // Processor time per molecule shows what the wall time hides on a shared machine: the
  // same per molecule on 1 and 2 workers means no serial part in the engine, and the
  // processors used (processor time / wall time) say how much of the machine the run got.
  const double molecules = std::max<double>(1.0, static_cast<double>(run.summary.computed));
  std::cout << fmt::format(
      "{:<20} {:>5} molecules in {:>7.1f} s = {:>6.3f} mol/s; processor {:.3f} s per molecule, {:.2f} "
      "processors used ({} with a failure)\n",
      what, run.summary.computed, run.summary.seconds, run.rate, run.cpu_s / molecules,
      run.summary.seconds > 0.0 ? run.cpu_s / run.summary.seconds : 0.0, run.summary.failed_molecules);
}

}  // namespace

int main(int argc, char** argv) {
  int count = 1000;
  int subset = 100;
  std::string input = default_input;
  fs::path folder = fs::temp_directory_path() / fmt::format("overtone-bench-screen-{}", getpid());
  ScreenRequest base;
  base.settings.stages = ScreenStages::anharmonic;
  for (int i = 1; i + 1 < argc; i += 2) {
    const std::string option = argv[i];
    const std::string value = argv[i + 1];
    if (option == "--count")
      count = std::stoi(value);
    else if (option == "--subset")
      subset = std::stoi(value);
    else if (option == "--stages")
      base.settings.stages = screen_stages_from_string(value);
    else if (option == "--timeout")
      base.timeout_s = std::stod(value);
    else if (option == "--memory-limit")
      base.memory_limit_mb = std::stod(value);
    else if (option == "--input")
      input = value;
    else if (option == "--folder")
      folder = value;
    else {
      std::cerr << "unknown option " << option << "\n";
      return 1;
    }
  }
  fs::create_directories(folder);
  std::cout << "machine before: " << load_average() << "\n";
  const Selection selection = select_molecules(input, count);
  std::cout << fmt::format(
      "set: first {} molecules of {} that MMFF94 types ({} scanned, {} untypable skipped); "
      "stages {}, time limit {} s, memory limit {} MiB per worker\n",
      selection.lines.size(), input, selection.scanned, selection.untyped, to_string(base.settings.stages),
      base.timeout_s, base.memory_limit_mb);
  const auto subset_size =
      static_cast<std::size_t>(std::min<int>(subset, static_cast<int>(selection.lines.size())));
  const fs::path subset_file = write_set(folder, "subset.smi", selection.lines, subset_size);
  const fs::path full_file = write_set(folder, "set.smi", selection.lines, selection.lines.size());

  const Timed one = screen(subset_file, folder / "subset-1.sqlite", 1, base);
  print_run(fmt::format("subset, 1 worker"), one);
  const Timed two = screen(subset_file, folder / "subset-2.sqlite", 2, base);
  print_run(fmt::format("subset, 2 workers"), two);
  const double ratio = one.rate > 0.0 ? two.rate / one.rate : 0.0;
  std::cout << fmt::format("ratio 2 workers / 1 worker: {:.2f} (target >= {:.1f}: {})\n", ratio, target_ratio,
                           ratio >= target_ratio ? "met" : "not met");

  const Timed full = screen(full_file, folder / "set.sqlite", 2, base);
  print_run("whole set, 2 workers", full);
  const double budget = target_full_s_per_1000 * static_cast<double>(selection.lines.size()) / 1000.0;
  std::cout << fmt::format("whole set: {:.1f} s against {:.0f} s ({} min per 1000 molecules): {}\n",
                           full.summary.seconds, budget, target_full_s_per_1000 / 60.0,
                           full.summary.seconds <= budget ? "met" : "not met");

  const Timed again = screen(full_file, folder / "set.sqlite", 2, base);
  std::cout << fmt::format(
      "resume of the finished screen: {:.3f} s, {} molecules computed (target < {:.0f} s: {})\n",
      again.summary.seconds, again.summary.computed, target_resume_s,
      again.summary.seconds < target_resume_s && again.summary.computed == 0 ? "met" : "not met");
  std::cout << "machine after: " << load_average() << "\n";
  std::cout << "stores in " << folder.string() << "\n";
  return 0;
}
