// The overtone program: a thin layer that parses arguments, calls the library and
// prints what it returns. Every user error (bad input, bad usage) becomes one line on
// stderr starting "overtone: error:" and exit status 1; --help prints help and exits 0;
// an internal error exits 2.
#include <fmt/format.h>
#include <unistd.h>

#include <CLI/CLI.hpp>
#include <algorithm>
#include <cctype>
#include <chrono>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <functional>
#include <iostream>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "cli/intensity_hook.hpp"
#include "cli/report_command.hpp"
#include "cli/spectrum_assign.hpp"
#include "core/error.hpp"
#include "core/text.hpp"
#include "intensity/taylor_dipole.hpp"
#include "pipeline/analysis.hpp"
#include "pipeline/molecule_input.hpp"
#include "potential/make_potential.hpp"
#include "report/anharmonic_report.hpp"
#include "report/document.hpp"
#include "report/output_folder.hpp"
#include "report/progress_text.hpp"
#include "report/symmetry_report.hpp"
#include "screen/progress_text.hpp"
#include "screen/screen.hpp"
#include "screen/screen_report.hpp"
#include "screen/store.hpp"
#include "symmetry/detect_point_group.hpp"

namespace {

using namespace overtone;

constexpr int user_error_status = 1;
constexpr int internal_error_status = 2;
constexpr const char* smiles_prefix = "smiles:";

// On a terminal the status line is redrawn this often at most (s); on a pipe (--progress)
// a line is written this often at most, and whenever a stage starts or ends.
constexpr double status_redraw_interval_s = 0.1;
constexpr double status_line_interval_s = 2.0;

// Progress of the long stages on stderr: a status line redrawn in place when stderr is a
// terminal, plain lines on a pipe only when --progress asks, nothing otherwise. The
// library reports through the ProgressCallback fields of the stages' options.
class StageProgressDisplay {
 public:
  void enable(bool forced) {
    terminal_ = isatty(STDERR_FILENO) != 0;
    enabled_ = forced || terminal_;
  }
  ProgressCallback callback() {
    if (!enabled_) return {};
    return [this](const ProgressEvent& event) { show(event); };
  }
  // Removes the status line, before other text goes to the terminal.
  void clear() {
    if (terminal_ && drawn_) std::cerr << "\r\033[K" << std::flush;
    drawn_ = false;
  }

 private:
  void show(const ProgressEvent& event) {
    const auto now = std::chrono::steady_clock::now();
    const bool new_stage = event.stage != stage_;
    const bool finished = event.total > 0 && event.done >= event.total;
    const double interval = terminal_ ? status_redraw_interval_s : status_line_interval_s;
    if (!new_stage && !finished && std::chrono::duration<double>(now - last_).count() < interval) return;
    const std::string line =
        "overtone: " + stage_progress_line(event, std::chrono::duration<double>(now - start_).count());
    if (terminal_) {
      std::cerr << "\r" << printable_text(line) << "\033[K" << std::flush;
      drawn_ = true;
    } else {
      std::cerr << printable_text(line) << "\n" << std::flush;
    }
    stage_ = event.stage;
    last_ = now;
  }

  bool enabled_ = false;
  bool terminal_ = false;
  bool drawn_ = false;
  std::string stage_;
  std::chrono::steady_clock::time_point start_ = std::chrono::steady_clock::now();
  std::chrono::steady_clock::time_point last_ = start_;
};

StageProgressDisplay& progress_display() {
  static StageProgressDisplay display;
  return display;
}

void warn(const std::string& message) {
  progress_display().clear();
  std::cerr << "overtone: warning: " << printable_text(message) << "\n";
}

// Standard output gets the report only after the status line is gone.
std::ostream& report_out() {
  progress_display().clear();
  return std::cout;
}

struct MoleculeArguments {
  std::string molecule;
  std::string potential;  // empty: the Taylor-expansion MOLECULE file itself, else the default force field
  std::vector<std::string> isotopes;
  std::string format;
  double symmetry_tolerance_angstrom = SymmetryOptions{}.tolerance_angstrom;
  bool refuse_incomplete = false;
  bool conformer_search = false;
  bool progress = false;          // progress lines on stderr also when it is not a terminal
  std::string electric_response;  // atomic polar tensors for intensities (docs/intensities.md)
};

void add_molecule_arguments(CLI::App& command, MoleculeArguments& arguments) {
  command
      .add_option("MOLECULE", arguments.molecule,
                  "molecule file (any format Open Babel reads: .xyz .sdf .mol .mol2 .cml .pdb ...), "
                  "smiles:STRING, or a Taylor-expansion potential file (.toml) with its geometry")
      ->required();
  command.add_option("-p,--potential", arguments.potential,
                     std::string("force field name (MMFF94, MMFF94s, MMFF94-openbabel, MMFF94s-openbabel, "
                                 "UFF, GAFF, Ghemical) or potential file; "
                                 "default ") +
                         default_force_field + ", or the MOLECULE file when it is a Taylor expansion");
  command.add_option("--isotope", arguments.isotopes,
                     "N=A: atom N (1-based, as in the file) gets mass number A; repeatable");
  command.add_option("--format", arguments.format, "input format when the file extension does not tell it");
  command
      .add_option("--symmetry-tolerance", arguments.symmetry_tolerance_angstrom,
                  "largest distance (Å) an atom may move when the structure is made exactly symmetric")
      ->capture_default_str();
  command.add_flag("--refuse-incomplete", arguments.refuse_incomplete,
                   "refuse a 2-D drawing or a structure with implicit hydrogens instead of adding the "
                   "hydrogens and building 3-D coordinates");
  command.add_option("--electric-response", arguments.electric_response,
                     "atomic polar tensors (and polarizability derivatives) for intensities, a file of "
                     "docs/intensities.md; default: the force field's partial charges");
  command.add_flag("--conformer-search", arguments.conformer_search,
                   "analyse the lowest conformer found by a quick search (general force fields) instead of "
                   "the minimum the input structure relaxes to");
  command.add_flag("--progress", arguments.progress,
                   "show the progress of long stages on stderr also when it is not a terminal");
}

LoadedMolecule load_input(const MoleculeArguments& arguments) {
  MoleculeInput input;
  input.path_or_smiles = arguments.molecule;
  input.format = arguments.format;
  if (arguments.refuse_incomplete) input.incomplete_structures = IncompleteStructurePolicy::refuse;
  for (const auto& text : arguments.isotopes) input.isotopes.push_back(parse_isotope_choice(text));
  if (input.path_or_smiles.rfind(smiles_prefix, 0) == 0) {
    input.is_smiles = true;
    input.path_or_smiles = input.path_or_smiles.substr(std::string(smiles_prefix).size());
  }
  LoadedMolecule loaded = load_molecule(input);
  for (const auto& warning : loaded.warnings) warn(warning);
  return loaded;
}

std::unique_ptr<Potential> potential_for(const MoleculeArguments& arguments, const LoadedMolecule& loaded) {
  std::string choice = arguments.potential;
  if (choice.empty()) choice = loaded.is_taylor_expansion ? arguments.molecule : default_force_field;
  auto potential = make_potential(choice, loaded.molecule);
  for (const auto& warning : potential_mass_warnings(*potential, loaded.molecule)) warn(warning);
  return potential;
}

// A single output file, written beside its target first and renamed into place, so that
// a failed or interrupted run never leaves a truncated file under the name.
void write_output(const std::string& path, const std::function<void(std::ostream&)>& write) {
  if (path == "-") {
    write(report_out());
    return;
  }
  std::error_code ec;
  if (std::filesystem::exists(path, ec) && !std::filesystem::is_regular_file(path, ec)) {
    std::ofstream out(path, std::ios::binary);  // a device or pipe, e.g. /dev/stdout
    write(out);
    if (!out) throw Error("writing '" + path + "' failed");
    return;
  }
  const std::string incomplete = path + ".incomplete";
  {
    std::ofstream out(incomplete, std::ios::binary);
    if (!out) throw Error("cannot open '" + path + "' for writing");
    write(out);
    out.close();
    if (!out) throw Error("writing '" + path + "' failed");
  }
  std::filesystem::rename(incomplete, path, ec);
  if (ec) {
    std::filesystem::remove(incomplete, ec);
    throw Error("cannot write '" + path + "': " + ec.message());
  }
}

void write_text(const std::string& path, const std::string& text) {
  write_output(path, [&](std::ostream& out) { out << text; });
}

// The molecule, its potential (which later stages evaluate again) and the analysis.
struct AnalysedMolecule {
  std::unique_ptr<Potential> potential;
  std::string potential_choice;  // what was named (force field or file)
  AnalysisResult analysis;
};

// Intensities of a run into the results (or the reason there are none).
void add_intensities(const MoleculeArguments& arguments, const AnalysedMolecule& analysed,
                     const AnharmonicResult* anharmonic, cli::IntensityOutcome& outcome,
                     RunResults& results) {
  outcome = cli::run_intensities(analysed.analysis, anharmonic, *analysed.potential,
                                 analysed.potential_choice, arguments.electric_response);
  if (!outcome.skipped.empty()) warn("intensities skipped: " + outcome.skipped);
  results.intensities = outcome.results ? &*outcome.results : nullptr;
  results.intensities_skipped = outcome.skipped;
}

AnalysedMolecule run_analysis(const MoleculeArguments& arguments) {
  progress_display().enable(arguments.progress);
  const LoadedMolecule input = load_input(arguments);
  AnalysedMolecule result;
  result.potential = potential_for(arguments, input);
  result.potential_choice =
      arguments.potential.empty() && input.is_taylor_expansion ? arguments.molecule : arguments.potential;
  AnalysisOptions options;
  options.symmetry.tolerance_angstrom = arguments.symmetry_tolerance_angstrom;
  if (arguments.conformer_search) options.conformers = ConformerSearch::analyse_best;
  options.progress = progress_display().callback();
  result.analysis = analyze_molecule(input.molecule, *result.potential, options);
  return result;
}

// A document to a path, or to standard output instead of the text report ("-").
// Returns whether the text report is still to be printed.
bool write_document(const std::string& json_path, const RunResults& results) {
  if (json_path.empty()) return true;
  const nlohmann::json document = analysis_document(results);
  write_output(json_path, [&](std::ostream& out) { write_json(out, document); });
  return json_path != "-";
}

int run_modes(const MoleculeArguments& arguments, const std::string& json_path) {
  const AnalysedMolecule analysed = run_analysis(arguments);
  RunResults results;
  results.analysis = &analysed.analysis;
  cli::IntensityOutcome intensities;
  add_intensities(arguments, analysed, nullptr, intensities, results);
  if (json_path != "-") report_out() << text_report(results);
  write_document(json_path, results);
  return 0;
}

// Limits of the families' energy range (README, "Commands"). Beyond 20 quanta a quartic
// surface has long turned over and a backbone means nothing; 100 000 cm⁻¹ is above the
// dissociation energy of every chemical bond (N₂, the strongest common one, about
// 79 000 cm⁻¹ from 945 kJ/mol; common practice, no source).
constexpr double max_family_quanta = 20.0;
constexpr double max_family_energy_cm1 = 100000.0;
constexpr double default_family_quanta = 3.0;  // the first overtones a spectrum usually shows

struct FamilyArguments {
  std::vector<int> fundamentals;  // ν numbers; empty: the default selection
  bool all_modes = false;         // every family, also above the default selection's size
  double energy_max_cm1 = 0.0;
  double quanta = default_family_quanta;
  bool branches = true;  // follow the families born at period doublings and branch points
  int branch_depth = 1;
  const CLI::Option* energy_option = nullptr;  // tells whether the value was given
  const CLI::Option* quanta_option = nullptr;
  bool energy_given() const { return energy_option && energy_option->count() > 0; }
  bool quanta_given() const { return quanta_option && quanta_option->count() > 0; }
};

// Generations of born families the command line follows at most: each costs as much as
// the families it is born of, and beyond the third the births are rarely resolved.
constexpr int max_branch_depth = 3;

void add_family_arguments(CLI::App& command, FamilyArguments& arguments, bool branches_by_default) {
  arguments.branches = branches_by_default;
  command.add_flag("--branches,!--no-branches", arguments.branches,
                   fmt::format("follow the families born where a family period-doubles or breaks a symmetry "
                               "(default: {})",
                               branches_by_default ? "on" : "off"));
  command.add_option(
      "--branch-depth", arguments.branch_depth,
      fmt::format("generations of born families to follow, 1 <= n <= {} (default 1)", max_branch_depth));
  command.add_option(
      "--mode", arguments.fundamentals,
      "continue only the families of fundamental νN (the ν column of the modes table); repeatable");
  const FamiliesOptions defaults;
  command
      .add_flag(
          "--all-modes", arguments.all_modes,
          fmt::format("continue the families of every mode (above {} modes the default continues only "
                      "the modes at or above {:.0f} cm-1 and their partners at or above {:.0f} cm-1 in "
                      "flagged resonances)",
                      defaults.all_modes_up_to, defaults.selection_min_cm1, defaults.selection_floor_cm1))
      ->excludes("--mode");
  auto* energy = command.add_option("--energy-max", arguments.energy_max_cm1,
                                    "continue every family up to this energy above the minimum (cm-1), "
                                    "0 < E <= 100000");
  auto* quanta = command.add_option("--quanta", arguments.quanta,
                                    "continue each family up to the energy of this many quanta of its own "
                                    "mode, 0 < n <= 20 (default 3)");
  energy->excludes(quanta);
  quanta->excludes(energy);
  arguments.energy_option = energy;
  arguments.quanta_option = quanta;
}

void check_range(double value, double largest, const std::string& option, const std::string& meaning) {
  if (!(std::isfinite(value) && value > 0.0 && value <= largest))
    throw Error(
        fmt::format("{} must be {} in the range 0 < value <= {}, got {}", option, meaning, largest, value));
}

// Checked before any work starts, so that a typing mistake costs no computing time.
void check_family_arguments(const FamilyArguments& arguments) {
  if (arguments.branch_depth < 1 || arguments.branch_depth > max_branch_depth)
    throw Error(fmt::format("--branch-depth must be a whole number in the range 1 <= n <= {}, got {}",
                            max_branch_depth, arguments.branch_depth));
  if (arguments.quanta_given())
    check_range(arguments.quanta, max_family_quanta, "--quanta", "a number of quanta");
  if (arguments.energy_given())
    check_range(arguments.energy_max_cm1, max_family_energy_cm1, "--energy-max", "an energy in cm-1");
}

FamiliesOptions families_options(const AnalysisResult& analysis, const FamilyArguments& arguments) {
  FamiliesOptions options;
  if (arguments.energy_given())
    options.energy_max_cm1 = arguments.energy_max_cm1;
  else
    options.quanta = arguments.quanta;
  options.mode_numbers = mode_numbers_of_fundamentals(analysis, arguments.fundamentals);
  options.all_modes = arguments.all_modes;
  options.branches.enabled = arguments.branches;
  options.branches.depth = arguments.branch_depth;
  // One frequency window for the families' resonance threats and the perturbative Fermi
  // candidates, so that the two lists can be compared pair by pair.
  options.enumeration.resonance_window_cm1 = Vpt2Options{}.fermi_gap_cm1;
  options.progress = progress_display().callback();
  return options;
}

AnharmonicOptions anharmonic_options(double exclude_below_cm1) {
  AnharmonicOptions options;
  options.progress = progress_display().callback();
  options.vpt2.exclude_below_cm1 = exclude_below_cm1;
  return options;
}

// Checked before any work starts, as the families' limits are.
void check_exclusion(double exclude_below_cm1) {
  if (!(std::isfinite(exclude_below_cm1) && exclude_below_cm1 >= 0.0))
    throw Error(
        fmt::format("--vpt2-exclude-below must be a wavenumber >= 0 in cm-1, got {}", exclude_below_cm1));
}

void add_exclusion_option(CLI::App& command, double& exclude_below_cm1) {
  command.add_option("--vpt2-exclude-below", exclude_below_cm1,
                     "reduced-dimensional VPT2: drop the modes below W cm-1 (and every force constant that "
                     "involves them) from the perturbative treatment");
}

// Where the console summary says the full lists are, from the files this run writes.
std::string full_lists_note(const std::vector<std::pair<std::string, std::string>>& written) {
  std::string note;
  for (const auto& [path, what] : written) {
    if (path.empty() || path == "-") continue;
    note += (note.empty() ? "" : ", ") + printable_text(path) + " (" + what + ")";
  }
  return note.empty() ? std::string("add --full-report PATH (full text), --lines PATH or --json PATH") : note;
}

void write_full_report(const std::string& path, const RunResults& results) {
  if (path.empty()) return;
  TextReportOptions full;
  full.detail = ReportDetail::full;
  write_text(path, text_report(results, full));
}

struct AnharmonicPaths {
  std::string json;
  std::string lines;
  std::string taylor;
  std::string full_report;
  double exclude_below_cm1 = 0.0;
};

// A later stage that cannot run (the structure is no minimum, say) ends a command that
// asked for that stage alone, with its reason as the error line.
void require_stage_ran(bool ran, const std::string& reason) {
  if (!ran) throw Error(reason);
}

int run_anharmonic(const MoleculeArguments& arguments, const AnharmonicPaths& paths) {
  const std::string& json_path = paths.json;
  check_exclusion(paths.exclude_below_cm1);
  const AnalysedMolecule analysed = run_analysis(arguments);
  const AnharmonicResult anharmonic =
      analyze_anharmonic(analysed.analysis, *analysed.potential, anharmonic_options(paths.exclude_below_cm1));
  require_stage_ran(anharmonic.ok(), anharmonic.message);
  RunResults results;
  results.analysis = &analysed.analysis;
  results.anharmonic = &anharmonic;
  cli::IntensityOutcome intensities;
  add_intensities(arguments, analysed, &anharmonic, intensities, results);
  if (!paths.lines.empty()) {
    AnharmonicReportOptions line_options;
    line_options.set_numbers = anharmonic.set_numbers;
    if (intensities.results && intensities.results->levels)
      line_options.intensities = &*intensities.results->levels;
    write_text(paths.lines, line_list_csv(anharmonic.vpt2, line_options));
  }
  if (!paths.taylor.empty()) {
    std::string text = taylor_expansion_text(analysed.analysis, anharmonic);
    const auto source = dipole_source_for(*analysed.potential, analysed.potential_choice,
                                          analysed.analysis.molecule, arguments.electric_response);
    if (source) text += dipole_surface_text(anharmonic.harmonic, *source);
    write_text(paths.taylor, text);
  }
  write_full_report(paths.full_report, results);
  TextReportOptions summary;
  summary.full_lists_note = full_lists_note(
      {{paths.full_report, "full text"}, {paths.lines, "line list"}, {json_path, "JSON document"}});
  if (json_path != "-") report_out() << text_report(results, summary);
  write_document(json_path, results);
  return 0;
}

int run_families(const MoleculeArguments& arguments, const FamilyArguments& family_arguments,
                 const std::string& json_path, const std::string& csv_folder,
                 const std::string& full_report) {
  check_family_arguments(family_arguments);
  const AnalysedMolecule analysed = run_analysis(arguments);
  const AnalysisResult& analysis = analysed.analysis;
  const FamiliesResult families =
      analyze_families(analysis, *analysed.potential, families_options(analysis, family_arguments));
  require_stage_ran(families.ok(), families.message);
  RunResults results;
  results.analysis = &analysis;
  results.families = &families;
  write_full_report(full_report, results);
  if (json_path != "-") report_out() << text_report(results);
  write_document(json_path, results);
  if (!csv_folder.empty()) {
    const OutputFolderResult written =
        write_output_folder(csv_folder, family_backbone_files(analysis, families));
    if (json_path != "-")
      std::cout << "\nwrote " << written.written.size() << " backbone files to " << csv_folder << "\n";
  }
  return 0;
}

struct AnalyzeSwitches {
  bool skip_anharmonic = false;
  bool skip_families = false;
  double exclude_below_cm1 = 0.0;
  std::vector<double> orbit_energies_cm1;  // --orbit-energy
};

int run_analyze(const MoleculeArguments& arguments, const FamilyArguments& family_arguments,
                const AnalyzeSwitches& switches, const std::string& out_directory) {
  check_family_arguments(family_arguments);
  check_exclusion(switches.exclude_below_cm1);
  const OrbitFramesOptions orbit_options = cli::orbit_frames_options(switches.orbit_energies_cm1);
  const AnalysedMolecule analysed = run_analysis(arguments);
  const AnalysisResult& analysis = analysed.analysis;
  const Potential& potential = *analysed.potential;
  // A bad --mode is the user's mistake, not a stage that cannot run: refuse it now.
  FamiliesOptions options = families_options(analysis, family_arguments);

  // A later stage that cannot run (a saddle point, say) does not discard the harmonic
  // results: the reason is printed and stored in the JSON document.
  RunResults results;
  results.analysis = &analysis;
  std::optional<AnharmonicResult> anharmonic;
  if (!switches.skip_anharmonic) {
    anharmonic = analyze_anharmonic(analysis, potential, anharmonic_options(switches.exclude_below_cm1));
    if (anharmonic->ok()) {
      results.anharmonic = &*anharmonic;
      // The default selection for large molecules keeps the families of flagged resonances
      // with the stretches it continues anyway.
      options.resonance_mode_numbers =
          flagged_resonance_mode_numbers(analysis, *anharmonic, options.selection_min_cm1);
    } else {
      warn("anharmonic stage skipped: " + anharmonic->message);
      results.anharmonic_skipped = anharmonic->message;
      anharmonic.reset();
    }
  }
  std::optional<FamiliesResult> families;
  if (!switches.skip_families) {
    families = analyze_families(analysis, potential, options);
    if (families->ok()) {
      results.families = &*families;
    } else {
      warn("families stage skipped: " + families->message);
      results.families_skipped = families->message;
      families.reset();
    }
  }
  std::optional<OrbitFramesResult> orbits;
  if (families) {
    orbits = sample_family_orbits(analysis, potential, *families, orbit_options);
    results.family_orbits = &*orbits;
  }

  cli::IntensityOutcome intensities;
  add_intensities(arguments, analysed, results.anharmonic, intensities, results);
  const OutputFolderResult written = write_output_folder(out_directory, analysis_files(results));
  TextReportOptions summary;
  summary.full_lists_note =
      "report.txt (full text), analysis.json and lines.csv in " + printable_text(out_directory);
  report_out() << text_report(results, summary);
  std::cout << "\nwrote " << written.written.size()
            << " files (analysis.json, report.txt, report.html, animations/*.xyz, modes.csv"
            << (anharmonic ? ", lines.csv" : "") << (families ? ", families/*.csv" : "") << ") to "
            << out_directory << "\n";
  std::cout << "open " << (std::filesystem::path(out_directory) / "report.html").string()
            << " in a web browser for plots and animations\n";
  return 0;
}

int run_symmetry(const MoleculeArguments& arguments, bool optimize_first) {
  const LoadedMolecule input = load_input(arguments);
  SymmetryOptions options;
  options.tolerance_angstrom = arguments.symmetry_tolerance_angstrom;
  if (!optimize_first) {
    std::cout << format_symmetry_report(detect_point_group(input.molecule, options));
    return 0;
  }
  const auto potential = potential_for(arguments, input);
  AnalysisOptions analysis_options;
  analysis_options.symmetry = options;
  if (arguments.conformer_search) analysis_options.conformers = ConformerSearch::analyse_best;
  const AnalysisResult analysis = analyze_molecule(input.molecule, *potential, analysis_options);
  if (analysis.optimized) std::cout << "structure: " << analysis.optimization.message << "\n";
  std::cout << format_symmetry_report(analysis.point_group, &analysis.mode_symmetry);
  return 0;
}

// Screening: `screen`, `screen-report`, `merge-stores` (docs/screening.md).

struct ScreenArguments {
  ScreenRequest request;
  std::string stages = "anharmonic";
  std::string shard;  // "i/N"
  std::string progress = "auto";
  const CLI::Option* energy_option = nullptr;
};

void add_screen_arguments(CLI::App& command, ScreenArguments& arguments) {
  ScreenRequest& request = arguments.request;
  command
      .add_option("INPUT", request.inputs,
                  "molecule files (SDF, MOL2, XYZ, any multi-record format Open Babel reads), SMILES files "
                  "(.smi: SMILES then an optional name per line), CSV files, or directories of them")
      ->required();
  command.add_option("--store", request.store_path, "the SQLite store to write (created when missing)")
      ->required();
  command
      .add_option("-p,--potential", request.settings.potential,
                  "force field name (MMFF94, MMFF94s, UFF, GAFF, Ghemical) or potential file")
      ->capture_default_str();
  command
      .add_option(
          "--stages", arguments.stages,
          "how far each molecule goes: harmonic (modes and species), anharmonic (+ force constants, x "
          "matrix, VPT2 fundamentals, resonance flags) or families (+ families of the resonant modes)")
      ->capture_default_str();
  command.add_flag("--levels", request.settings.levels,
                   "also store the VPT2 line list (overtones, combinations, resonance polyads)");
  command.add_flag(
      "--all-families", request.settings.all_families,
      "with --stages families: continue the families of every mode, not only of those in flagged "
      "resonances");
  auto* quanta =
      command.add_option("--quanta", request.settings.family_quanta,
                         "families: continue to the energy of this many quanta of each family's mode "
                         "(0 < n <= 20, default 3)");
  auto* energy = command.add_option("--energy-max", request.settings.family_energy_max_cm1,
                                    "families: continue to this energy above the minimum (cm-1)");
  quanta->excludes(energy);
  energy->excludes(quanta);
  arguments.energy_option = energy;
  command.add_option(
      "--isotope-rule", request.isotope_rules,
      "an isotopologue of every molecule: SMARTS=A gives the first (or the [X:1]-mapped) atom of "
      "each match mass number A; H@SMARTS=A its hydrogens; e.g. 'C(=O)=13', 'C=[O:1]=18', "
      "'H@[O,N;!H0]=2'; repeatable, one variant each");
  command.add_option("-j,--jobs", request.jobs, "worker processes at once (default: one per processor)");
  command
      .add_option("--timeout", request.timeout_s,
                  "seconds one molecule may take (all its variants) before its worker is stopped and it is "
                  "recorded as failed; 0: no limit")
      ->capture_default_str();
  command
      .add_option(
          "--memory-limit", request.memory_limit_mb,
          "MiB of address space each worker process may use; a molecule over it is recorded as failed; "
          "0: no limit")
      ->capture_default_str();
  command.add_option("--shard", arguments.shard,
                     "i/N: take only the i-th of N parts of the molecules (by content hash), for job arrays; "
                     "combine the stores with merge-stores");
  command.add_flag("--retry-failures", request.retry_failures,
                   "compute the failed molecules of this run again");
  command.add_option("--format", request.input_options.format,
                     "Open Babel format of every file input when the extensions do not tell it");
  command.add_option("--smiles-column", request.input_options.smiles_column, "CSV column holding the SMILES")
      ->capture_default_str();
  command.add_option("--id-column", request.input_options.id_column, "CSV column holding the molecule id")
      ->capture_default_str();
  command
      .add_option("--symmetry-tolerance", request.settings.symmetry_tolerance_angstrom,
                  "largest distance (Å) an atom may move when the structure is made exactly symmetric")
      ->capture_default_str();
  add_exclusion_option(command, request.settings.vpt2_exclude_below_cm1);
  command
      .add_option("--progress", arguments.progress,
                  "auto (a bar on a terminal, a line every 10 s otherwise), bar, lines or none")
      ->capture_default_str();
}

void parse_shard(const std::string& text, ScreenRequest& request) {
  if (text.empty()) return;
  const auto slash = text.find('/');
  try {
    std::size_t used_index = 0;
    std::size_t used_count = 0;
    if (slash == std::string::npos) throw std::invalid_argument("no slash");
    request.shard_index = std::stoi(text.substr(0, slash), &used_index);
    request.shard_count = std::stoi(text.substr(slash + 1), &used_count);
    if (used_index != slash || used_count != text.size() - slash - 1)
      throw std::invalid_argument("trailing text");
  } catch (const std::exception&) {
    throw Error("--shard must be i/N with whole numbers, e.g. 3/8, got '" + printable_text(text) + "'");
  }
}

// A plain line on a pipe this often (s), so that a log shows the screen is alive.
constexpr double progress_line_interval_s = 10.0;
// A terminal bar is redrawn at most this often (s).
constexpr double progress_bar_interval_s = 0.2;

class ProgressPrinter {
 public:
  explicit ProgressPrinter(const std::string& mode) {
    if (mode == "auto")
      style_ = isatty(STDERR_FILENO) ? Style::bar : Style::lines;
    else if (mode == "bar")
      style_ = Style::bar;
    else if (mode == "lines")
      style_ = Style::lines;
    else if (mode == "none")
      style_ = Style::none;
    else
      throw Error("--progress must be auto, bar, lines or none, got '" + printable_text(mode) + "'");
  }
  void operator()(const ScreenProgress& progress) {
    if (style_ == Style::none) return;
    const auto now = std::chrono::steady_clock::now();
    const double since = std::chrono::duration<double>(now - last_).count();
    if (style_ == Style::bar) {
      if (!progress.done && printed_ && since < progress_bar_interval_s) return;
      std::cerr << "\r" << progress_bar_line(progress) << "\033[K" << (progress.done ? "\n" : "")
                << std::flush;
    } else {
      if (!progress.done && printed_ && since < progress_line_interval_s) return;
      if (progress.done && progress.total == 0) return;
      std::cerr << progress_plain_line(progress) << "\n" << std::flush;
    }
    printed_ = true;
    last_ = now;
  }

 private:
  enum class Style { bar, lines, none };
  Style style_ = Style::lines;
  bool printed_ = false;
  std::chrono::steady_clock::time_point last_ = std::chrono::steady_clock::now();
};

int run_screen_command(ScreenArguments& arguments) {
  ScreenRequest& request = arguments.request;
  request.settings.stages = screen_stages_from_string(arguments.stages);
  parse_shard(arguments.shard, request);
  if (!(arguments.energy_option && arguments.energy_option->count() > 0))
    request.settings.family_energy_max_cm1 = 0.0;
  ProgressPrinter printer(arguments.progress);
  const ScreenSummary summary =
      run_screen(request, [&](const ScreenProgress& progress) { printer(progress); });
  if (!summary.coordinator) return 0;
  for (const std::string& warning : summary.warnings) warn(warning);
  std::cout << fmt::format(
      "store {} run {} (settings {}): {} records listed ({} duplicates), {} molecules in this {}, {} already "
      "done, "
      "{} computed now on {} {} ({} with a failure, {} failed and {} not-applicable results) in {}\n",
      printable_text(summary.store_path), summary.run_id, summary.settings_hash.substr(0, 12), summary.listed,
      summary.duplicates, summary.in_shard, request.shard_count > 1 ? "shard" : "screen",
      summary.already_done, summary.computed, summary.workers,
      summary.engine == "mpi" ? "mpi ranks" : "worker processes", summary.failed_molecules,
      summary.failed_results, summary.not_applicable_results, duration_text(summary.seconds));
  return 0;
}

struct ScreenReportArguments {
  std::string store;
  std::string window;  // "A:B", either side may be empty
  std::optional<double> min_criterion;
  std::string csv_path;
  std::optional<long long> run_id;
  std::string table;
};

std::optional<double> window_end(const std::string& text, const std::string& whole) {
  if (text.empty()) return std::nullopt;
  try {
    std::size_t used = 0;
    const double value = std::stod(text, &used);
    if (used != text.size()) throw std::invalid_argument("trailing text");
    return value;
  } catch (const std::exception&) {
    throw Error("--window must be A:B in cm-1 (either end may be left out), got '" + printable_text(whole) +
                "'");
  }
}

int run_screen_report(const ScreenReportArguments& arguments) {
  if (!arguments.table.empty()) {
    write_text(arguments.csv_path.empty() ? "-" : arguments.csv_path,
               store_table_csv(arguments.store, arguments.table));
    return 0;
  }
  ScreenReportOptions options;
  if (!arguments.window.empty()) {
    const auto colon = arguments.window.find(':');
    if (colon == std::string::npos)
      throw Error("--window must be A:B in cm-1 (either end may be left out), got '" +
                  printable_text(arguments.window) + "'");
    options.window_min_cm1 = window_end(arguments.window.substr(0, colon), arguments.window);
    options.window_max_cm1 = window_end(arguments.window.substr(colon + 1), arguments.window);
    if (options.window_min_cm1 && options.window_max_cm1 && *options.window_min_cm1 > *options.window_max_cm1)
      throw Error(fmt::format("--window A:B needs A <= B, got {}:{}", *options.window_min_cm1,
                              *options.window_max_cm1));
  }
  if (arguments.min_criterion &&
      !(std::isfinite(*arguments.min_criterion) && *arguments.min_criterion >= 0.0))
    throw Error(
        fmt::format("--min-criterion must be a number >= 0 (cm-1), got {}", *arguments.min_criterion));
  options.min_criterion = arguments.min_criterion;
  options.run_id = arguments.run_id;
  const ScreenReport report = screen_report(arguments.store, options);
  if (!arguments.csv_path.empty()) write_text(arguments.csv_path, screen_report_csv(report));
  if (arguments.csv_path != "-") std::cout << screen_report_text(report);
  return 0;
}

int run_merge_stores(const std::string& output, const std::vector<std::string>& inputs) {
  ScreenStore store(output);
  for (const std::string& input : inputs) {
    const MergeCounts counts = merge_store(store, input);
    std::cout << fmt::format(
        "merged {} into {}: {} runs and {} molecules new, {} results added, {} failed results replaced by "
        "done "
        "ones, {} already there\n",
        printable_text(input), printable_text(output), counts.runs_added, counts.molecules_added,
        counts.results_added, counts.results_replaced, counts.results_skipped);
  }
  return 0;
}

// CLI11's messages start with a capital and name its own error kinds; ours are one
// lower-case line that says where to look.
std::string usage_error_line(const CLI::ParseError& error) {
  std::string message = error.what();
  // "A subcommand is required" -> "a subcommand ..."; a name such as "MOLECULE" stays.
  const std::string first_word = message.substr(0, message.find(' '));
  const bool is_name = first_word.size() > 1 &&
                       std::none_of(first_word.begin(), first_word.end(),
                                    [](char c) { return std::islower(static_cast<unsigned char>(c)); });
  if (!message.empty() && !is_name)
    message[0] = static_cast<char>(std::tolower(static_cast<unsigned char>(message[0])));
  for (char& c : message)
    if (c == '\n') c = ' ';
  // The README calls them commands.
  for (std::size_t at = message.find("subcommand"); at != std::string::npos;
       at = message.find("subcommand", at))
    message.replace(at, std::string("subcommand").size(), "command");
  return "overtone: error: " + printable_text(message) + " (see overtone --help)";
}

// `screen-report` and its options.
CLI::App* add_screen_report_command(CLI::App& app, ScreenReportArguments& report_arguments) {
  CLI::App* screen_report_command = app.add_subcommand(
      "screen-report", "per molecule, the flagged resonances of a store in a window, and the failures");
  screen_report_command->add_option("STORE", report_arguments.store, "the SQLite store of a screen")
      ->required();
  screen_report_command->add_option("--window", report_arguments.window,
                                    "A:B: only resonances whose upper level lies between A and B cm-1");
  screen_report_command->add_option(
      "--min-criterion", report_arguments.min_criterion,
      "list every candidate whose criterion value reaches C (cm-1), flagged or not");
  screen_report_command->add_option("--csv", report_arguments.csv_path,
                                    "write the listed resonances (or with --table, the table) as CSV to PATH "
                                    "('-' for standard output)");
  screen_report_command->add_option("--run", report_arguments.run_id,
                                    "only this run of the store (its run_id)");
  screen_report_command->add_option("--table", report_arguments.table,
                                    "export this table as CSV instead: runs, molecules, results, modes, "
                                    "resonances, levels, families, failures");
  return screen_report_command;
}

// CLI11 calls an unknown command word "a subcommand is required"; say what it was.
bool unknown_command(CLI::App& app, int argc, char** argv) {
  if (argc <= 1 || argv[1][0] == '-') return false;
  for (const CLI::App* command : app.get_subcommands([](CLI::App*) { return true; }))
    if (command->check_name(argv[1])) return false;
  std::cerr << "overtone: error: unknown command '" << printable_text(argv[1])
            << "' (commands: modes, analyze, anharmonic, families, symmetry, screen, screen-report, "
               "merge-stores, spectrum, assign, report; see overtone --help)\n";
  return true;
}

// A command of the program: its parser, and what runs it once the arguments are parsed
// (the arguments live as long as the closure).
struct Command {
  CLI::App* parser = nullptr;
  std::function<int()> run;
};

Command add_modes_command(CLI::App& app) {
  struct Arguments {
    MoleculeArguments molecule;
    std::string json_path;
  };
  auto arguments = std::make_shared<Arguments>();
  CLI::App* modes = app.add_subcommand("modes", "optimize the structure and print the harmonic normal modes");
  add_molecule_arguments(*modes, arguments->molecule);
  modes->add_option("--json", arguments->json_path,
                    "write the JSON document to PATH ('-' for standard output)");
  return {modes, [arguments] { return run_modes(arguments->molecule, arguments->json_path); }};
}

Command add_analyze_command(CLI::App& app) {
  struct Arguments {
    MoleculeArguments molecule;
    FamilyArguments families;
    AnalyzeSwitches switches;
    std::string out_directory = "overtone-out";
  };
  auto arguments = std::make_shared<Arguments>();
  CLI::App* analyze = app.add_subcommand(
      "analyze",
      "the full analysis: modes, anharmonic levels, families; writes analysis.json, modes.csv, lines.csv and "
      "families/*.csv");
  add_molecule_arguments(*analyze, arguments->molecule);
  add_family_arguments(*analyze, arguments->families, false);
  analyze
      ->add_option("-o,--out", arguments->out_directory,
                   "output folder (replaced as a whole when complete; an existing one may hold only "
                   "earlier output)")
      ->capture_default_str();
  analyze->add_flag("--no-anharmonic", arguments->switches.skip_anharmonic, "leave out the anharmonic stage");
  analyze->add_flag("--no-families", arguments->switches.skip_families, "leave out the families stage");
  add_exclusion_option(*analyze, arguments->switches.exclude_below_cm1);
  cli::add_orbit_energy_option(*analyze, arguments->switches.orbit_energies_cm1);
  return {analyze, [arguments] {
            return run_analyze(arguments->molecule, arguments->families, arguments->switches,
                               arguments->out_directory);
          }};
}

Command add_anharmonic_command(CLI::App& app) {
  struct Arguments {
    MoleculeArguments molecule;
    AnharmonicPaths paths;
  };
  auto arguments = std::make_shared<Arguments>();
  AnharmonicPaths& paths = arguments->paths;
  CLI::App* anharmonic = app.add_subcommand(
      "anharmonic", "cubic and quartic force constants, VPT2 levels, resonances and the line list");
  add_molecule_arguments(*anharmonic, arguments->molecule);
  anharmonic->add_option("--json", paths.json, "write the JSON document to PATH ('-' for standard output)");
  anharmonic->add_option("--lines", paths.lines, "write the line list (CSV) to PATH");
  anharmonic->add_option(
      "--full-report", paths.full_report,
      "write the full text report (x matrices, every resonance candidate and level) to PATH");
  add_exclusion_option(*anharmonic, paths.exclude_below_cm1);
  anharmonic->add_option(
      "--export-taylor", paths.taylor,
      "write the quartic force field as a Taylor-expansion potential file (normal coordinates)");
  return {anharmonic, [arguments] { return run_anharmonic(arguments->molecule, arguments->paths); }};
}

Command add_families_command(CLI::App& app) {
  struct Arguments {
    MoleculeArguments molecule;
    FamilyArguments families;
    std::string json_path;
    std::string csv_folder;
    std::string full_report;
  };
  auto arguments = std::make_shared<Arguments>();
  CLI::App* families = app.add_subcommand(
      "families", "symmetry-predicted families of nonlinear normal modes and their backbone curves");
  add_molecule_arguments(*families, arguments->molecule);
  add_family_arguments(*families, arguments->families, true);
  families->add_option("--json", arguments->json_path,
                       "write the JSON document to PATH ('-' for standard output)");
  families->add_option("--full-report", arguments->full_report,
                       "write the full text report (one section per family) to PATH");
  families->add_option("--csv", arguments->csv_folder,
                       "write one CSV of backbone points per family into this folder (replaced as a whole)");
  return {families, [arguments] {
            return run_families(arguments->molecule, arguments->families, arguments->json_path,
                                arguments->csv_folder, arguments->full_report);
          }};
}

Command add_symmetry_command(CLI::App& app) {
  struct Arguments {
    MoleculeArguments molecule;
    bool with_modes = false;
  };
  auto arguments = std::make_shared<Arguments>();
  CLI::App* symmetry = app.add_subcommand(
      "symmetry", "point group, operations, character table and the species of the vibrations");
  add_molecule_arguments(*symmetry, arguments->molecule);
  symmetry->add_flag("--with-modes", arguments->with_modes,
                     "optimize on the potential first and assign the species of the computed modes");
  return {symmetry, [arguments] { return run_symmetry(arguments->molecule, arguments->with_modes); }};
}

Command add_screen_command(CLI::App& app) {
  auto arguments = std::make_shared<ScreenArguments>();
  CLI::App* screen = app.add_subcommand(
      "screen", "screen sets of molecules into an SQLite store that a rerun resumes (docs/screening.md)");
  add_screen_arguments(*screen, *arguments);
  return {screen, [arguments] { return run_screen_command(*arguments); }};
}

Command add_screen_report(CLI::App& app) {
  auto arguments = std::make_shared<ScreenReportArguments>();
  CLI::App* command = add_screen_report_command(app, *arguments);
  return {command, [arguments] { return run_screen_report(*arguments); }};
}

Command add_merge_command(CLI::App& app) {
  struct Arguments {
    std::string output;
    std::vector<std::string> inputs;
  };
  auto arguments = std::make_shared<Arguments>();
  CLI::App* merge = app.add_subcommand(
      "merge-stores",
      "add the results of screening stores (e.g. of --shard parts) to one store, without duplicates");
  merge->add_option("OUT", arguments->output, "the store to merge into (created when missing)")->required();
  merge->add_option("IN", arguments->inputs, "stores to merge")->required();
  return {merge, [arguments] { return run_merge_stores(arguments->output, arguments->inputs); }};
}

Command add_spectrum(CLI::App& app) {
  auto arguments = std::make_shared<cli::SpectrumArguments>();
  CLI::App* command = cli::add_spectrum_command(app, *arguments);
  return {command, [arguments] { return cli::run_spectrum(*arguments); }};
}

Command add_html_report(CLI::App& app) {
  auto arguments = std::make_shared<cli::ReportArguments>();
  CLI::App* command = cli::add_report_command(app, *arguments);
  return {command, [arguments] { return cli::run_report_command(*arguments); }};
}

Command add_assign(CLI::App& app) {
  auto arguments = std::make_shared<cli::AssignArguments>();
  CLI::App* command = cli::add_assign_command(app, *arguments);
  return {command, [arguments] { return cli::run_assign(*arguments); }};
}

// Every command, in the order of the help text.
std::vector<Command> add_commands(CLI::App& app) {
  return {add_modes_command(app),    add_analyze_command(app),  add_anharmonic_command(app),
          add_families_command(app), add_symmetry_command(app), add_screen_command(app),
          add_screen_report(app),    add_merge_command(app),    add_spectrum(app),
          add_assign(app),           add_html_report(app)};
}

// The chosen command, with an Error turned into one line and a non-zero status.
int run_chosen(const std::vector<Command>& commands) {
  try {
    for (const Command& command : commands)
      if (*command.parser) return command.run();
  } catch (const overtone::Error& error) {
    progress_display().clear();
    std::cerr << "overtone: error: " << printable_text(error.what()) << "\n";
    return user_error_status;
  } catch (const std::exception& error) {
    progress_display().clear();
    std::cerr << "overtone: internal error: " << printable_text(error.what()) << "\n";
    return internal_error_status;
  }
  return 0;
}

}  // namespace

int main(int argc, char** argv) {
  CLI::App app{"overtone: harmonic and anharmonic vibrational analysis for assigning spectra"};
  app.require_subcommand(1);
  const std::vector<Command> commands = add_commands(app);

  if (unknown_command(app, argc, argv)) return user_error_status;
  try {
    app.parse(argc, argv);
  } catch (const CLI::Success& success) {
    return app.exit(success);  // --help: the help text, exit status 0
  } catch (const CLI::ParseError& error) {
    std::cerr << usage_error_line(error) << "\n";
    return user_error_status;
  }
  return run_chosen(commands);
}
