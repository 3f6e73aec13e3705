// The overtone program: a thin layer that parses arguments, calls the library and
// prints what it returns. Every overtone::Error becomes one line on stderr and exit
// status 1.
#include <CLI/CLI.hpp>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "anharmonic/anharmonic_report.hpp"
#include "anharmonic/taylor_export.hpp"
#include "core/error.hpp"
#include "families/families_report.hpp"
#include "molecule/read_molecule.hpp"
#include "pipeline/analysis.hpp"
#include "potential/make_potential.hpp"
#include "report/anharmonic_json.hpp"
#include "report/families_json.hpp"
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
                  "force field name (MMFF94, MMFF94s, MMFF94-openbabel, MMFF94s-openbabel, UFF, GAFF, "
                  "Ghemical) or potential file")
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

// The molecule, its potential (which later stages evaluate again) and the analysis.
struct AnalysedMolecule {
  std::unique_ptr<Potential> potential;
  AnalysisResult analysis;
};

AnalysedMolecule run_analysis(const MoleculeArguments& arguments) {
  const ReadResult input = load_molecule(arguments);
  for (const auto& warning : input.warnings) std::cerr << "overtone: warning: " << warning << "\n";
  AnalysedMolecule result;
  result.potential = make_potential(arguments.potential, input.molecule);
  AnalysisOptions options;
  options.symmetry.tolerance_angstrom = arguments.symmetry_tolerance_angstrom;
  result.analysis = analyze_molecule(input.molecule, *result.potential, options);
  return result;
}

int run_modes(const MoleculeArguments& arguments, const std::string& json_path) {
  const AnalysisResult analysis = run_analysis(arguments).analysis;
  if (json_path == "-") {
    std::cout << analysis_to_json(analysis).dump(2) << "\n";
    return 0;
  }
  std::cout << modes_table(analysis);
  if (!json_path.empty()) write_text(json_path, analysis_to_json(analysis).dump(2) + "\n");
  return 0;
}

struct FamilyArguments {
  std::vector<int> fundamentals;  // ν numbers; empty: all
  double energy_max_cm1 = 0.0;
  double quanta = 0.0;
};

constexpr double default_family_quanta = 3.0;  // the first overtones a spectrum usually shows

void add_family_arguments(CLI::App& command, FamilyArguments& arguments) {
  command.add_option(
      "--mode", arguments.fundamentals,
      "continue only the families of fundamental νN (the ν column of the modes table); repeatable");
  auto* energy = command.add_option("--energy-max", arguments.energy_max_cm1,
                                    "continue every family up to this energy above the minimum (cm-1)");
  auto* quanta =
      command.add_option("--quanta", arguments.quanta,
                         "continue each family up to the energy of this many quanta of its own mode "
                         "(default 3)");
  energy->excludes(quanta);
  quanta->excludes(energy);
}

FamiliesOptions families_options(const AnalysisResult& analysis, const FamilyArguments& arguments) {
  FamiliesOptions options;
  if (arguments.energy_max_cm1 > 0.0)
    options.energy_max_cm1 = arguments.energy_max_cm1;
  else
    options.quanta = arguments.quanta > 0.0 ? arguments.quanta : default_family_quanta;
  options.mode_numbers = mode_numbers_of_fundamentals(analysis, arguments.fundamentals);
  // One frequency window for the families' resonance threats and the perturbative Fermi
  // candidates, so that the two lists can be compared pair by pair.
  options.enumeration.resonance_window_cm1 = Vpt2Options{}.fermi_gap_cm1;
  return options;
}

void create_folder(const std::string& folder) {
  std::error_code ec;
  std::filesystem::create_directories(folder, ec);
  if (ec) throw Error("cannot create output folder '" + folder + "': " + ec.message());
}

// One CSV of backbone points per continued family; returns the files written.
std::vector<std::string> write_family_csvs(const FamiliesResult& families, const std::string& folder) {
  create_folder(folder);
  std::vector<std::string> written;
  for (std::size_t index = 0; index < families.families.size(); ++index) {
    if (!families.families[index].continued) continue;
    const int family = static_cast<int>(index);
    const std::string path =
        (std::filesystem::path(folder) / family_csv_file_name(families, family)).string();
    write_text(path, family_points_csv(families, family));
    written.push_back(path);
  }
  return written;
}

void merge_into(nlohmann::json& document, const nlohmann::json& part) {
  for (auto item = part.begin(); item != part.end(); ++item) document[item.key()] = item.value();
}

int run_anharmonic(const MoleculeArguments& arguments, const std::string& json_path,
                   const std::string& lines_path, const std::string& taylor_path) {
  const AnalysedMolecule analysed = run_analysis(arguments);
  const AnalysisResult& analysis = analysed.analysis;
  const Potential& potential = *analysed.potential;
  const AnharmonicResult anharmonic = analyze_anharmonic(analysis, potential);
  nlohmann::json document = analysis_to_json(analysis);
  merge_into(document, anharmonic_to_json(analysis, anharmonic));
  const AnharmonicReportOptions report_options{anharmonic.set_numbers};
  if (!lines_path.empty()) write_text(lines_path, line_list_csv(anharmonic.vpt2, report_options));
  if (!taylor_path.empty()) {
    const TaylorExpansionData expansion = taylor_expansion_from_force_constants(
        anharmonic.force_constants, anharmonic.harmonic, analysis.molecule, ExpansionCoordinates::normal,
        analysis.molecule.title + " (quartic force field of " + analysis.potential_description + ")");
    write_text(taylor_path, write_taylor_expansion(expansion));
  }
  if (json_path == "-") {
    std::cout << document.dump(2) << "\n";
    return 0;
  }
  std::cout << modes_table(analysis) << "\n"
            << anharmonic_report(anharmonic.force_constants, anharmonic.vpt2, report_options);
  if (!json_path.empty()) write_text(json_path, document.dump(2) + "\n");
  return 0;
}

int run_families(const MoleculeArguments& arguments, const FamilyArguments& family_arguments,
                 const std::string& json_path, const std::string& csv_folder) {
  const AnalysedMolecule analysed = run_analysis(arguments);
  const AnalysisResult& analysis = analysed.analysis;
  const Potential& potential = *analysed.potential;
  const FamiliesResult families =
      analyze_families(analysis, potential, families_options(analysis, family_arguments));
  nlohmann::json document = analysis_to_json(analysis);
  document["families"] = families_to_json(families);
  document["families_summary"] = families_summary_to_json(families);
  std::vector<std::string> written;
  if (!csv_folder.empty()) written = write_family_csvs(families, csv_folder);
  if (json_path == "-") {
    std::cout << document.dump(2) << "\n";
    return 0;
  }
  std::cout << modes_table(analysis) << "\n" << families_text_report(families);
  if (!json_path.empty()) write_text(json_path, document.dump(2) + "\n");
  if (!written.empty())
    std::cout << "\nwrote " << written.size() << " backbone files to " << csv_folder << "\n";
  return 0;
}

struct AnalyzeSwitches {
  bool skip_anharmonic = false;
  bool skip_families = false;
};

int run_analyze(const MoleculeArguments& arguments, const FamilyArguments& family_arguments,
                const AnalyzeSwitches& switches, const std::string& out_directory) {
  const AnalysedMolecule analysed = run_analysis(arguments);
  const AnalysisResult& analysis = analysed.analysis;
  const Potential& potential = *analysed.potential;

  create_folder(out_directory);
  const auto base = std::filesystem::path(out_directory);
  nlohmann::json document = analysis_to_json(analysis);
  std::size_t backbone_files = 0;
  std::cout << modes_table(analysis);

  // A later stage that cannot run (a saddle point, say) does not discard the harmonic
  // results: the reason is printed and stored in the JSON document.
  std::optional<AnharmonicResult> anharmonic;
  if (!switches.skip_anharmonic) {
    try {
      anharmonic = analyze_anharmonic(analysis, potential);
    } catch (const Error& error) {
      std::cerr << "overtone: warning: anharmonic stage skipped: " << error.what() << "\n";
      document["anharmonic_skipped"] = error.what();
    }
  }
  if (anharmonic) {
    merge_into(document, anharmonic_to_json(analysis, *anharmonic));
    const AnharmonicReportOptions report_options{anharmonic->set_numbers};
    write_text((base / "lines.csv").string(), line_list_csv(anharmonic->vpt2, report_options));
    std::cout << "\n" << anharmonic_report(anharmonic->force_constants, anharmonic->vpt2, report_options);
  }

  std::optional<FamiliesResult> families;
  if (!switches.skip_families) {
    try {
      families = analyze_families(analysis, potential, families_options(analysis, family_arguments));
    } catch (const Error& error) {
      std::cerr << "overtone: warning: families stage skipped: " << error.what() << "\n";
      document["families_skipped"] = error.what();
    }
  }
  if (families) {
    document["families"] = families_to_json(*families);
    document["families_summary"] = families_summary_to_json(*families);
    backbone_files = write_family_csvs(*families, (base / "families").string()).size();
    std::cout << "\n" << families_text_report(*families);
  }

  if (anharmonic && families) {
    nlohmann::json checks = nlohmann::json::array();
    std::string text;
    for (const ResonanceCrossCheck& check : cross_check_resonances(analysis, *anharmonic, *families)) {
      checks.push_back({{"lower_fundamental", check.lower_fundamental},
                        {"upper_fundamental", check.upper_fundamental},
                        {"gap_cm1", check.gap_cm1},
                        {"perturbative_listed", check.listed_by_perturbative},
                        {"perturbative_allowed", check.perturbative_allowed},
                        {"perturbative_flagged", check.perturbative_flagged},
                        {"families_listed", check.listed_by_families},
                        {"families_allowed", check.families_allowed},
                        {"families_of_lower", check.families_of_lower},
                        {"compared", check.compared},
                        {"agree", check.agree},
                        {"summary", check.summary}});
      text += "  " + check.summary + "\n";
    }
    document["resonance_cross_check"] = checks;
    if (!text.empty())
      std::cout << "\nFermi 1:2 resonances, perturbative rule against the families:\n" << text;
  }

  write_text((base / "analysis.json").string(), document.dump(2) + "\n");
  write_text((base / "modes.csv").string(), modes_csv(analysis));
  std::cout << "\nwrote analysis.json, modes.csv" << (anharmonic ? ", lines.csv" : "");
  if (backbone_files > 0) std::cout << " and " << backbone_files << " backbone files in families/";
  std::cout << " to " << out_directory << "\n";
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
  FamilyArguments analyze_family_arguments;
  AnalyzeSwitches analyze_switches;
  std::string out_directory = "overtone-out";
  CLI::App* analyze = app.add_subcommand(
      "analyze",
      "the full analysis: modes, anharmonic levels, families; writes analysis.json, modes.csv, lines.csv and "
      "families/*.csv");
  add_molecule_arguments(*analyze, analyze_arguments);
  add_family_arguments(*analyze, analyze_family_arguments);
  analyze->add_option("-o,--out", out_directory, "output folder")->capture_default_str();
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
  families->add_option("--csv", csv_folder, "write one CSV of backbone points per family into this folder");

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
    if (*analyze)
      return run_analyze(analyze_arguments, analyze_family_arguments, analyze_switches, out_directory);
    if (*anharmonic)
      return run_anharmonic(anharmonic_arguments, anharmonic_json_path, lines_path, taylor_path);
    if (*families) return run_families(families_arguments, family_arguments, families_json_path, csv_folder);
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
