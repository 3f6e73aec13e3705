#pragma once
// `overtone report OUTDIR [--observed BANDS.csv]`: the HTML report and animations/ rebuilt
// from OUTDIR/analysis.json without computing anything; and the families' orbit
// animations of `overtone analyze` (--orbit-energy).
#include <CLI/CLI.hpp>
#include <optional>
#include <string>
#include <vector>

#include "families/families.hpp"
#include "pipeline/analysis.hpp"
#include "pipeline/orbit_frames.hpp"

namespace overtone::cli {

struct ReportArguments {
  std::string out_directory;
  std::string observed;  // CSV with wavenumber_cm1 and optionally intensity or relative_intensity
};

CLI::App* add_report_command(CLI::App& app, ReportArguments& arguments);
int run_report_command(const ReportArguments& arguments);

// --orbit-energy E (repeatable): energies above the minimum (cm-1) of the drawn orbits.
void add_orbit_energy_option(CLI::App& command, std::vector<double>& energies_cm1);
// Checked before any work starts.
OrbitFramesOptions orbit_frames_options(const std::vector<double>& energies_cm1);

}  // namespace overtone::cli
