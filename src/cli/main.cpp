// The overtone program: a thin layer that parses arguments, calls the library and
// prints what it returns. Every overtone::Error becomes one line on stderr and exit
// status 1.
#include <CLI/CLI.hpp>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <memory>
#include <string>
#include <vector>

#include "core/error.hpp"
#include "molecule/read_molecule.hpp"
#include "pipeline/analysis.hpp"
#include "potential/make_potential.hpp"
#include "report/harmonic_report.hpp"
#include "symmetry/detect_point_group.hpp"
#include "symmetry/symmetry_report.hpp"

namespace {

using namespace overtone;

constexpr const char* smiles_prefix = "smiles:";

struct MoleculeArguments {
  std::string molecule;
  std::string potential = default_force_field;
  std::vector<std::string> isotopes;
  std::string format;
  double symmetry_tolerance_angstrom = SymmetryOptions{}.tolerance_angstrom;
};

void add_molecule_arguments(CLI::App& command, MoleculeArguments& arguments) {
  command
      .add_option("MOLECULE", arguments.molecule,
                  "molecule file (any format Open Babel reads: .xyz .sdf .mol .mol2 .cml .pdb ...) or "
                  "smiles:STRING")
      ->required();
  command
      .add_option("-p,--potential", arguments.potential,
                  "force field name (MMFF94, MMFF94s, UFF, GAFF, Ghemical) or potential file")
      ->capture_default_str();
  command.add_option("-i,--isotope", arguments.isotopes,
                     "N=A: atom N (1-based, as in the file) gets mass number A; repeatable");
  command.add_option("--format", arguments.format, "input format when the file extension does not tell it");
  command
      .add_option("--symmetry-tolerance", arguments.symmetry_tolerance_angstrom,
                  "largest distance (Å) an atom may move when the structure is made exactly symmetric")
      ->capture_default_str();
}

ReadResult load_molecule(const MoleculeArguments& arguments) {
  ReadOptions options;
  options.format = arguments.format;
  for (const auto& text : arguments.isotopes) options.isotopes.push_back(parse_isotope_choice(text));
  std::string input = arguments.molecule;
  if (input.rfind(smiles_prefix, 0) == 0) {
    options.input_is_smiles = true;
    input = input.substr(std::string(smiles_prefix).size());
  }
  return read_molecule(input, options);
}

void write_text(const std::string& path, const std::string& text) {
  if (path == "-") {
    std::cout << text;
    return;
  }
  std::ofstream out(path);
  if (!out) throw Error("cannot open '" + path + "' for writing");
  out << text;
  if (!out) throw Error("writing '" + path + "' failed");
}

AnalysisResult run_analysis(const MoleculeArguments& arguments) {
  const ReadResult input = load_molecule(arguments);
  for (const auto& warning : input.warnings) std::cerr << "overtone: warning: " << warning << "\n";
  const auto potential = make_potential(arguments.potential, input.molecule);
  AnalysisOptions options;
  options.symmetry.tolerance_angstrom = arguments.symmetry_tolerance_angstrom;
  return analyze_molecule(input.molecule, *potential, options);
}

int run_modes(const MoleculeArguments& arguments, const std::string& json_path) {
  const AnalysisResult analysis = run_analysis(arguments);
  if (json_path == "-") {
    std::cout << analysis_to_json(analysis).dump(2) << "\n";
    return 0;
  }
  std::cout << modes_table(analysis);
  if (!json_path.empty()) write_text(json_path, analysis_to_json(analysis).dump(2) + "\n");
  return 0;
}

int run_analyze(const MoleculeArguments& arguments, const std::string& out_directory) {
  const AnalysisResult analysis = run_analysis(arguments);
  std::error_code ec;
  std::filesystem::create_directories(out_directory, ec);
  if (ec) throw Error("cannot create output folder '" + out_directory + "': " + ec.message());
  const std::string stem = analysis.molecule.title.empty() ? "molecule" : analysis.molecule.title;
  const auto base = std::filesystem::path(out_directory);
  const std::string json_path = (base / "analysis.json").string();
  const std::string csv_path = (base / "modes.csv").string();
  write_text(json_path, analysis_to_json(analysis).dump(2) + "\n");
  write_text(csv_path, modes_csv(analysis));
  std::cout << modes_table(analysis);
  std::cout << "\nwrote " << json_path << " and " << csv_path << " (" << stem << ")\n";
  return 0;
}

int run_symmetry(const MoleculeArguments& arguments, bool optimize_first) {
  const ReadResult input = load_molecule(arguments);
  for (const auto& warning : input.warnings) std::cerr << "overtone: warning: " << warning << "\n";
  SymmetryOptions options;
  options.tolerance_angstrom = arguments.symmetry_tolerance_angstrom;
  if (!optimize_first) {
    std::cout << format_symmetry_report(detect_point_group(input.molecule, options));
    return 0;
  }
  const auto potential = make_potential(arguments.potential, input.molecule);
  AnalysisOptions analysis_options;
  analysis_options.symmetry = options;
  const AnalysisResult analysis = analyze_molecule(input.molecule, *potential, analysis_options);
  if (analysis.optimized) std::cout << "structure: " << analysis.optimization.message << "\n";
  std::cout << format_symmetry_report(analysis.point_group, &analysis.mode_symmetry);
  return 0;
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
  std::string out_directory = "overtone-out";
  CLI::App* analyze = app.add_subcommand("analyze", "the full analysis; writes analysis.json and modes.csv");
  add_molecule_arguments(*analyze, analyze_arguments);
  analyze->add_option("-o,--out", out_directory, "output folder")->capture_default_str();

  MoleculeArguments symmetry_arguments;
  bool with_modes = false;
  CLI::App* symmetry = app.add_subcommand(
      "symmetry", "point group, operations, character table and the species of the vibrations");
  add_molecule_arguments(*symmetry, symmetry_arguments);
  symmetry->add_flag("--with-modes", with_modes,
                     "optimize on the potential first and assign the species of the computed modes");

  try {
    app.parse(argc, argv);
  } catch (const CLI::ParseError& error) {
    return app.exit(error);
  }

  try {
    if (*modes) return run_modes(modes_arguments, json_path);
    if (*analyze) return run_analyze(analyze_arguments, out_directory);
    if (*symmetry) return run_symmetry(symmetry_arguments, with_modes);
  } catch (const overtone::Error& error) {
    std::cerr << "overtone: error: " << error.what() << "\n";
    return 1;
  } catch (const std::exception& error) {
    std::cerr << "overtone: internal error: " << error.what() << "\n";
    return 2;
  }
  return 0;
}
