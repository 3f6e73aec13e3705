#include "cli/report_command.hpp"

#include <fmt/format.h>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <sstream>

#include "core/error.hpp"
#include "core/text.hpp"
#include "report/html_report.hpp"

namespace overtone::cli {

namespace fs = std::filesystem;

namespace {

std::string file_text(const fs::path& path, const std::string& what) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw Error("cannot read " + what + " '" + printable_text(path.string()) + "'");
  std::ostringstream text;
  text << in.rdbuf();
  return text.str();
}

// Each file through a temporary name and a rename, so that a reader never sees half a page.
void replace_file(const fs::path& path, const std::string& content) {
  fs::create_directories(path.parent_path());
  const fs::path temporary = path.string() + ".incomplete";
  {
    std::ofstream out(temporary, std::ios::binary);
    out << content;
    if (!out.flush()) throw Error("cannot write '" + printable_text(temporary.string()) + "'");
  }
  fs::rename(temporary, path);
}

}  // namespace

CLI::App* add_report_command(CLI::App& app, ReportArguments& arguments) {
  CLI::App* command = app.add_subcommand(
      "report", "rebuild report.html and animations/ of an output folder of analyze from its analysis.json");
  command->add_option("OUTDIR", arguments.out_directory, "output folder of `overtone analyze`")->required();
  command->add_option("--observed", arguments.observed,
                      "measured band list or spectrum to overlay: CSV with a header naming the column "
                      "wavenumber_cm1 and optionally intensity or relative_intensity (docs/html-report.md)");
  return command;
}

int run_report_command(const ReportArguments& arguments) {
  const fs::path folder(arguments.out_directory);
  const fs::path json_path = folder / "analysis.json";
  nlohmann::json document;
  try {
    document = nlohmann::json::parse(file_text(json_path, "the analysis document"));
  } catch (const nlohmann::json::parse_error& error) {
    throw Error("expected a JSON document in '" + printable_text(json_path.string()) +
                "', found: " + error.what());
  }
  HtmlReportOptions options;
  if (!arguments.observed.empty())
    options.observed =
        parse_observed_csv(file_text(arguments.observed, "the observed spectrum"), arguments.observed);
  std::vector<OutputFile> files;
  try {
    files = report_files(document, options);
  } catch (const nlohmann::json::exception& error) {
    // A document edited by hand or written by something else: a field of the wrong kind.
    throw Error("expected an analysis document of overtone analyze in '" +
                printable_text(json_path.string()) + "', found a field of another shape: " + error.what());
  }
  for (const OutputFile& file : files) replace_file(folder / file.relative_path, file.content);
  std::cout << "wrote " << files.size() << " files (report.html, animations/*.xyz); open "
            << (folder / "report.html").string() << " in a web browser\n";
  return 0;
}

void add_orbit_energy_option(CLI::App& command, std::vector<double>& energies_cm1) {
  command.add_option(
      "--orbit-energy", energies_cm1,
      "energy above the minimum (cm-1) at which each family's periodic orbit is animated in "
      "report.html and animations/family-NN.xyz (repeatable; default: two quanta of the family's "
      "mode)");
}

OrbitFramesOptions orbit_frames_options(const std::vector<double>& energies_cm1) {
  // In the words of the command line (the options' own check names their field).
  for (const double energy : energies_cm1)
    if (!(std::isfinite(energy) && energy > 0.0))
      throw Error(fmt::format("orbit energies must be positive numbers of cm-1, got {}", energy));
  OrbitFramesOptions options;
  options.energies_cm1 = energies_cm1;
  options.validate();
  return options;
}

}  // namespace overtone::cli
