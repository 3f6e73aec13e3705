#include "cli/spectrum_assign.hpp"

#include <fmt/format.h>

#include <fstream>
#include <iostream>
#include <optional>
#include <sstream>

#include "assign/assignment.hpp"
#include "cli/intensity_hook.hpp"
#include "core/error.hpp"
#include "core/text.hpp"
#include "pipeline/molecule_input.hpp"
#include "potential/make_potential.hpp"
#include "report/assignment_report.hpp"
#include "report/document.hpp"
#include "report/spectrum_report.hpp"
#include "spectrum/predicted_levels.hpp"

namespace overtone::cli {

namespace {

bool ends_with(const std::string& text, const std::string& suffix) {
  return text.size() >= suffix.size() &&
         text.compare(text.size() - suffix.size(), suffix.size(), suffix) == 0;
}

void add_prediction_arguments(CLI::App& command, PredictionArguments& arguments) {
  command
      .add_option(
          "INPUT", arguments.input,
          "analysis.json of `overtone analyze`, or a MOLECULE (file, smiles:STRING, Taylor-expansion file) "
          "to analyse first")
      ->required();
  command.add_option("-p,--potential", arguments.potential,
                     "force field name or potential file (MOLECULE only)");
  command.add_option("--isotope", arguments.isotopes,
                     "N=A: atom N gets mass number A; repeatable (MOLECULE only)");
  command.add_option("--format", arguments.format, "input format when the file extension does not tell it");
  command.add_option("--electric-response", arguments.electric_response,
                     "atomic polar tensors and polarizability derivatives (docs/intensities.md)");
  command.add_flag("--harmonic", arguments.harmonic,
                   "use the harmonic fundamentals instead of the VPT2 line list");
}

nlohmann::json read_document(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw Error("cannot read analysis document '" + path + "'");
  try {
    return nlohmann::json::parse(in);
  } catch (const nlohmann::json::exception& error) {
    throw Error("analysis document '" + path + "' is not JSON: " + std::string(error.what()));
  }
}

void warn(const std::string& message) {
  std::cerr << "overtone: warning: " << printable_text(message) << "\n";
}

// The document of a fresh analysis of the MOLECULE with these isotopes.
nlohmann::json analysed_document(const PredictionArguments& arguments,
                                 const std::vector<std::string>& isotopes) {
  MoleculeInput input;
  input.path_or_smiles = arguments.input;
  input.format = arguments.format;
  for (const std::string& text : isotopes) input.isotopes.push_back(parse_isotope_choice(text));
  if (input.path_or_smiles.rfind("smiles:", 0) == 0) {
    input.is_smiles = true;
    input.path_or_smiles = input.path_or_smiles.substr(7);
  }
  const LoadedMolecule loaded = load_molecule(input);
  for (const std::string& warning : loaded.warnings) warn(warning);
  const std::string choice = !arguments.potential.empty() ? arguments.potential
                             : loaded.is_taylor_expansion ? arguments.input
                                                          : default_force_field;
  const auto potential = make_potential(choice, loaded.molecule);
  const AnalysisResult analysis = analyze_molecule(loaded.molecule, *potential);
  RunResults results;
  results.analysis = &analysis;
  std::optional<AnharmonicResult> anharmonic;
  if (!arguments.harmonic) {
    anharmonic = analyze_anharmonic(analysis, *potential);
    // A prediction asked for anharmonic positions: without them there is none to give.
    if (!anharmonic->ok()) throw Error(anharmonic->message);
    results.anharmonic = &*anharmonic;
  }
  const IntensityOutcome intensities =
      run_intensities(analysis, results.anharmonic, *potential, choice, arguments.electric_response);
  if (!intensities.skipped.empty()) warn("intensities skipped: " + intensities.skipped);
  results.intensities = intensities.results ? &*intensities.results : nullptr;
  results.intensities_skipped = intensities.skipped;
  return analysis_document(results);
}

PredictedSpectrum predicted(const PredictionArguments& arguments, const std::vector<std::string>& isotopes) {
  if (ends_with(arguments.input, ".json")) {
    if (!isotopes.empty()) throw Error("isotopologues need a MOLECULE to analyse, got an analysis document");
    return predicted_from_document(read_document(arguments.input), !arguments.harmonic);
  }
  return predicted_from_document(analysed_document(arguments, isotopes), !arguments.harmonic);
}

void write_file(const std::string& path, const std::string& text) {
  if (path == "-") {
    std::cout << text;
    return;
  }
  std::ofstream out(path, std::ios::binary);
  out << text;
  if (!out) throw Error("cannot write '" + path + "'");
}

void parse_range(const std::string& text, SpectrumOptions& options) {
  if (text.empty()) return;
  const auto colon = text.find(':');
  try {
    if (colon == std::string::npos) throw std::invalid_argument("no colon");
    options.min_cm1 = std::stod(text.substr(0, colon));
    options.max_cm1 = std::stod(text.substr(colon + 1));
  } catch (const std::exception&) {
    throw Error("--range must be A:B in cm-1, got '" + printable_text(text) + "'");
  }
}

}  // namespace

CLI::App* add_spectrum_command(CLI::App& app, SpectrumArguments& arguments) {
  CLI::App* command = app.add_subcommand(
      "spectrum",
      "a broadened stick spectrum (CSV and SVG) from the predicted line list and its intensities");
  add_prediction_arguments(*command, arguments.prediction);
  auto* ir = command->add_flag("--ir", "infrared (default)");
  command->add_flag("--raman", arguments.raman, "Raman activities instead of infrared intensities")
      ->excludes(ir);
  command->add_option("--fwhm", arguments.fwhm_cm1, "full width at half maximum of each line, cm-1")
      ->capture_default_str();
  command->add_option("--shape", arguments.shape, "line shape: lorentz, gauss or voigt")
      ->capture_default_str();
  command->add_option("--range", arguments.range,
                      "A:B, the wavenumber range in cm-1 (default: around the lines)");
  command->add_option("--step", arguments.step_cm1, "grid spacing, cm-1")->capture_default_str();
  command->add_option("--temperature", arguments.temperature_k,
                      "add hot bands out of the populated fundamentals at T kelvin (VPT2 positions)");
  command->add_option("-o,--out", arguments.out, "output prefix: PREFIX.csv, PREFIX-lines.csv, PREFIX.svg")
      ->capture_default_str();
  return command;
}

int run_spectrum(const SpectrumArguments& arguments) {
  SpectrumOptions options;
  options.shape = line_shape_from_string(arguments.shape);
  options.fwhm_cm1 = arguments.fwhm_cm1;
  options.step_cm1 = arguments.step_cm1;
  parse_range(arguments.range, options);
  options.validate();
  const PredictedSpectrum levels = predicted(arguments.prediction, {});
  const SpectrumKind kind = arguments.raman ? SpectrumKind::raman : SpectrumKind::infrared;
  const std::vector<SpectrumLine> lines = arguments.temperature_k > 0.0
                                              ? lines_with_hot_bands(levels, kind, arguments.temperature_k)
                                              : spectrum_lines(levels, kind);
  if (lines.empty())
    throw Error(
        std::string("no line has a known ") + (arguments.raman ? "Raman activity" : "infrared intensity") +
        (arguments.raman ? " (Raman needs polarizability derivatives: --electric-response FILE)" : ""));
  const SpectrumResult spectrum = broaden_lines(lines, options);
  for (const std::string& warning : spectrum.warnings) warn(warning);
  const std::string unit = arguments.raman ? "A^4/u" : "km/mol";
  write_file(arguments.out + ".csv",
             spectrum_csv(spectrum, arguments.raman ? "raman_activity_a4_per_u_per_cm1"
                                                    : "ir_intensity_km_per_mol_per_cm1"));
  write_file(arguments.out + "-lines.csv", spectrum_lines_csv(spectrum));
  const std::string title =
      fmt::format("{}, {} ({}), {} {} cm-1{}", levels.molecule, arguments.raman ? "Raman" : "infrared",
                  levels.anharmonic ? "VPT2" : "harmonic", to_string(options.shape), options.fwhm_cm1,
                  arguments.temperature_k > 0.0 ? fmt::format(", {} K", arguments.temperature_k) : "");
  write_file(arguments.out + ".svg", spectrum_svg(spectrum, {title, unit}));
  std::cout << fmt::format("{}: {} lines, intensities from {}\nwrote {}.csv, {}-lines.csv, {}.svg\n", title,
                           spectrum.lines.size(),
                           levels.intensity_source.empty() ? "an unknown source" : levels.intensity_source,
                           arguments.out, arguments.out, arguments.out);
  return 0;
}

CLI::App* add_assign_command(CLI::App& app, AssignArguments& arguments) {
  CLI::App* command = app.add_subcommand(
      "assign",
      "assign observed bands (BANDS.csv, docs/assignment.md) to predicted levels by minimum total cost");
  add_prediction_arguments(*command, arguments.prediction);
  command
      ->add_option("--observed", arguments.observed,
                   "the observed bands (CSV; columns in docs/assignment.md)")
      ->required();
  command->add_option(
      "--isotopologue", arguments.isotopologues,
      "TAG=N=A[,N=A...]: predict isotopologue TAG (atom N with mass number A) for the bands whose "
      "isotopologue column says TAG; repeatable");
  command->add_option("--scale", arguments.scale, "fit: fit one scale factor and assign again with it; none")
      ->capture_default_str();
  command
      ->add_option("--expected-error", arguments.expected_error_cm1,
                   "expected error of a fundamental, cm-1 (grows with the quanta)")
      ->capture_default_str();
  command->add_option("--json", arguments.json_path,
                      "write the assignment as JSON to PATH ('-' for standard output)");
  command->add_option("--csv", arguments.csv_path, "write one row per observed band as CSV to PATH");
  return command;
}

int run_assign(const AssignArguments& arguments) {
  if (arguments.scale != "fit" && arguments.scale != "none")
    throw Error("--scale must be fit or none, got '" + printable_text(arguments.scale) + "'");
  AssignOptions options;
  options.fit_scale = arguments.scale == "fit";
  options.expected_error_cm1 = arguments.expected_error_cm1;
  options.validate();
  const std::vector<ObservedBand> bands = read_observed_bands(arguments.observed);
  std::vector<IsotopologueLevels> levels;
  levels.push_back({"", predicted(arguments.prediction, arguments.prediction.isotopes)});
  for (const std::string& text : arguments.isotopologues) {
    const auto equals = text.find('=');
    if (equals == std::string::npos || equals == 0)
      throw Error("--isotopologue must be TAG=N=A[,N=A...], got '" + printable_text(text) + "'");
    std::vector<std::string> isotopes = arguments.prediction.isotopes;
    std::stringstream list(text.substr(equals + 1));
    for (std::string item; std::getline(list, item, ',');) isotopes.push_back(item);
    levels.push_back({text.substr(0, equals), predicted(arguments.prediction, isotopes)});
  }
  const AssignResult result = assign_bands(bands, levels, options);
  const AssignmentReportInput report{&bands, &levels, &result, &options};
  if (!arguments.json_path.empty()) write_file(arguments.json_path, assignment_json(report).dump(2) + "\n");
  if (!arguments.csv_path.empty()) write_file(arguments.csv_path, assignment_csv(report));
  if (arguments.json_path != "-" && arguments.csv_path != "-") std::cout << assignment_text(report);
  return 0;
}

}  // namespace overtone::cli
