// The overtone program: a thin layer that parses arguments, calls the library and
// prints what it returns. Every user error (bad input, bad usage) becomes one line on
// stderr starting "overtone: error:" and exit status 1; --help prints help and exits 0;
// an internal error exits 2.
#include <fmt/format.h>

#include <CLI/CLI.hpp>
#include <algorithm>
#include <cctype>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <functional>
#include <iostream>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "core/error.hpp"
#include "core/text.hpp"
#include "pipeline/analysis.hpp"
#include "pipeline/molecule_input.hpp"
#include "potential/make_potential.hpp"
#include "report/anharmonic_report.hpp"
#include "report/document.hpp"
#include "report/output_folder.hpp"
#include "report/symmetry_report.hpp"
#include "symmetry/detect_point_group.hpp"

namespace {

using namespace overtone;

constexpr int user_error_status = 1;
constexpr int internal_error_status = 2;
constexpr const char* smiles_prefix = "smiles:";

void warn(const std::string& message) {
  std::cerr << "overtone: warning: " << printable_text(message) << "\n";
}

struct MoleculeArguments {
  std::string molecule;
  std::string potential;  // empty: the Taylor-expansion MOLECULE file itself, else the default force field
  std::vector<std::string> isotopes;
  std::string format;
  double symmetry_tolerance_angstrom = SymmetryOptions{}.tolerance_angstrom;
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
}

LoadedMolecule load_input(const MoleculeArguments& arguments) {
  MoleculeInput input;
  input.path_or_smiles = arguments.molecule;
  input.format = arguments.format;
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
    write(std::cout);
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
  AnalysisResult analysis;
};

AnalysedMolecule run_analysis(const MoleculeArguments& arguments) {
  const LoadedMolecule input = load_input(arguments);
  AnalysedMolecule result;
  result.potential = potential_for(arguments, input);
  AnalysisOptions options;
  options.symmetry.tolerance_angstrom = arguments.symmetry_tolerance_angstrom;
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
  const AnalysisResult analysis = run_analysis(arguments).analysis;
  RunResults results;
  results.analysis = &analysis;
  if (json_path != "-") std::cout << text_report(results);
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
  std::vector<int> fundamentals;  // ν numbers; empty: all
  double energy_max_cm1 = 0.0;
  double quanta = default_family_quanta;
  const CLI::Option* energy_option = nullptr;  // tells whether the value was given
  const CLI::Option* quanta_option = nullptr;
  bool energy_given() const { return energy_option && energy_option->count() > 0; }
  bool quanta_given() const { return quanta_option && quanta_option->count() > 0; }
};

void add_family_arguments(CLI::App& command, FamilyArguments& arguments) {
  command.add_option(
      "--mode", arguments.fundamentals,
      "continue only the families of fundamental νN (the ν column of the modes table); repeatable");
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
  // One frequency window for the families' resonance threats and the perturbative Fermi
  // candidates, so that the two lists can be compared pair by pair.
  options.enumeration.resonance_window_cm1 = Vpt2Options{}.fermi_gap_cm1;
  return options;
}

int run_anharmonic(const MoleculeArguments& arguments, const std::string& json_path,
                   const std::string& lines_path, const std::string& taylor_path) {
  const AnalysedMolecule analysed = run_analysis(arguments);
  const AnharmonicResult anharmonic = analyze_anharmonic(analysed.analysis, *analysed.potential);
  RunResults results;
  results.analysis = &analysed.analysis;
  results.anharmonic = &anharmonic;
  if (!lines_path.empty())
    write_text(lines_path, line_list_csv(anharmonic.vpt2, AnharmonicReportOptions{anharmonic.set_numbers}));
  if (!taylor_path.empty()) write_text(taylor_path, taylor_expansion_text(analysed.analysis, anharmonic));
  if (json_path != "-") std::cout << text_report(results);
  write_document(json_path, results);
  return 0;
}

int run_families(const MoleculeArguments& arguments, const FamilyArguments& family_arguments,
                 const std::string& json_path, const std::string& csv_folder) {
  check_family_arguments(family_arguments);
  const AnalysedMolecule analysed = run_analysis(arguments);
  const AnalysisResult& analysis = analysed.analysis;
  const FamiliesResult families =
      analyze_families(analysis, *analysed.potential, families_options(analysis, family_arguments));
  RunResults results;
  results.analysis = &analysis;
  results.families = &families;
  if (json_path != "-") std::cout << text_report(results);
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
};

int run_analyze(const MoleculeArguments& arguments, const FamilyArguments& family_arguments,
                const AnalyzeSwitches& switches, const std::string& out_directory) {
  check_family_arguments(family_arguments);
  const AnalysedMolecule analysed = run_analysis(arguments);
  const AnalysisResult& analysis = analysed.analysis;
  const Potential& potential = *analysed.potential;
  // A bad --mode is the user's mistake, not a stage that cannot run: refuse it now.
  const FamiliesOptions options = families_options(analysis, family_arguments);

  // A later stage that cannot run (a saddle point, say) does not discard the harmonic
  // results: the reason is printed and stored in the JSON document.
  RunResults results;
  results.analysis = &analysis;
  std::optional<AnharmonicResult> anharmonic;
  if (!switches.skip_anharmonic) {
    try {
      anharmonic = analyze_anharmonic(analysis, potential);
      results.anharmonic = &*anharmonic;
    } catch (const Error& error) {
      warn(std::string("anharmonic stage skipped: ") + error.what());
      results.anharmonic_skipped = error.what();
    }
  }
  std::optional<FamiliesResult> families;
  if (!switches.skip_families) {
    try {
      families = analyze_families(analysis, potential, options);
      results.families = &*families;
    } catch (const Error& error) {
      warn(std::string("families stage skipped: ") + error.what());
      results.families_skipped = error.what();
    }
  }

  const OutputFolderResult written = write_output_folder(out_directory, analysis_files(results));
  std::cout << text_report(results);
  std::cout << "\nwrote " << written.written.size() << " files (analysis.json, modes.csv"
            << (anharmonic ? ", lines.csv" : "") << (families ? ", families/*.csv" : "") << ") to "
            << out_directory << "\n";
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
  const AnalysisResult analysis = analyze_molecule(input.molecule, *potential, analysis_options);
  if (analysis.optimized) std::cout << "structure: " << analysis.optimization.message << "\n";
  std::cout << format_symmetry_report(analysis.point_group, &analysis.mode_symmetry);
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

}  // namespace

int main(int argc, char** argv) {
  CLI::App app{"overtone: harmonic and anharmonic vibrational analysis for assigning spectra"};
  app.require_subcommand(1);

  MoleculeArguments modes_arguments;
  std::string json_path;
  CLI::App* modes = app.add_subcommand("modes", "optimize the structure and print the harmonic normal modes");
  add_molecule_arguments(*modes, modes_arguments);
  modes->add_option("--json", json_path, "write the JSON document to PATH ('-' for standard output)");

  MoleculeArguments analyze_arguments;
  FamilyArguments analyze_family_arguments;
  AnalyzeSwitches analyze_switches;
  std::string out_directory = "overtone-out";
  CLI::App* analyze = app.add_subcommand(
      "analyze",
      "the full analysis: modes, anharmonic levels, families; writes analysis.json, modes.csv, lines.csv and "
      "families/*.csv");
  add_molecule_arguments(*analyze, analyze_arguments);
  add_family_arguments(*analyze, analyze_family_arguments);
  analyze
      ->add_option("-o,--out", out_directory,
                   "output folder (replaced as a whole when complete; an existing one may hold only "
                   "earlier output)")
      ->capture_default_str();
  analyze->add_flag("--no-anharmonic", analyze_switches.skip_anharmonic, "leave out the anharmonic stage");
  analyze->add_flag("--no-families", analyze_switches.skip_families, "leave out the families stage");

  MoleculeArguments anharmonic_arguments;
  std::string anharmonic_json_path;
  std::string lines_path;
  CLI::App* anharmonic = app.add_subcommand(
      "anharmonic", "cubic and quartic force constants, VPT2 levels, resonances and the line list");
  add_molecule_arguments(*anharmonic, anharmonic_arguments);
  anharmonic->add_option("--json", anharmonic_json_path,
                         "write the JSON document to PATH ('-' for standard output)");
  anharmonic->add_option("--lines", lines_path, "write the line list (CSV) to PATH");
  std::string taylor_path;
  anharmonic->add_option(
      "--export-taylor", taylor_path,
      "write the quartic force field as a Taylor-expansion potential file (normal coordinates)");

  MoleculeArguments families_arguments;
  FamilyArguments family_arguments;
  std::string families_json_path;
  std::string csv_folder;
  CLI::App* families = app.add_subcommand(
      "families", "symmetry-predicted families of nonlinear normal modes and their backbone curves");
  add_molecule_arguments(*families, families_arguments);
  add_family_arguments(*families, family_arguments);
  families->add_option("--json", families_json_path,
                       "write the JSON document to PATH ('-' for standard output)");
  families->add_option("--csv", csv_folder,
                       "write one CSV of backbone points per family into this folder (replaced as a whole)");

  MoleculeArguments symmetry_arguments;
  bool with_modes = false;
  CLI::App* symmetry = app.add_subcommand(
      "symmetry", "point group, operations, character table and the species of the vibrations");
  add_molecule_arguments(*symmetry, symmetry_arguments);
  symmetry->add_flag("--with-modes", with_modes,
                     "optimize on the potential first and assign the species of the computed modes");

  // CLI11 calls an unknown command word "a subcommand is required"; say what it was.
  const auto is_command = [&](const std::string& word) {
    for (const CLI::App* command : {modes, analyze, anharmonic, families, symmetry})
      if (command->check_name(word)) return true;
    return false;
  };
  if (argc > 1 && argv[1][0] != '-' && !is_command(argv[1])) {
    std::cerr << "overtone: error: unknown command '" << printable_text(argv[1])
              << "' (commands: modes, analyze, anharmonic, families, symmetry; see overtone --help)\n";
    return user_error_status;
  }
  try {
    app.parse(argc, argv);
  } catch (const CLI::Success& success) {
    return app.exit(success);  // --help: the help text, exit status 0
  } catch (const CLI::ParseError& error) {
    std::cerr << usage_error_line(error) << "\n";
    return user_error_status;
  }

  try {
    if (*modes) return run_modes(modes_arguments, json_path);
    if (*analyze)
      return run_analyze(analyze_arguments, analyze_family_arguments, analyze_switches, out_directory);
    if (*anharmonic)
      return run_anharmonic(anharmonic_arguments, anharmonic_json_path, lines_path, taylor_path);
    if (*families) return run_families(families_arguments, family_arguments, families_json_path, csv_folder);
    if (*symmetry) return run_symmetry(symmetry_arguments, with_modes);
  } catch (const overtone::Error& error) {
    std::cerr << "overtone: error: " << printable_text(error.what()) << "\n";
    return user_error_status;
  } catch (const std::exception& error) {
    std::cerr << "overtone: internal error: " << printable_text(error.what()) << "\n";
    return internal_error_status;
  }
  return 0;
}
