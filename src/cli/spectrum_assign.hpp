#pragma once
// `overtone spectrum` and `overtone assign`: thin over src/spectrum, src/assign and the
// report writers. Both start from an analysis document (analysis.json of `analyze`) or a
// MOLECULE, which is analysed first (harmonic, anharmonic and intensities).
#include <CLI/CLI.hpp>
#include <string>
#include <vector>

namespace overtone::cli {

struct PredictionArguments {
  std::string input;  // ANALYSIS.json or MOLECULE (file, smiles:..., Taylor expansion)
  std::string potential;
  std::vector<std::string> isotopes;
  std::string format;
  std::string electric_response;
  bool harmonic = false;  // harmonic fundamentals only
};

struct SpectrumArguments {
  PredictionArguments prediction;
  bool raman = false;
  double fwhm_cm1 = 10.0;
  std::string shape = "lorentz";
  std::string range;  // "A:B"
  double step_cm1 = 1.0;
  double temperature_k = 0.0;  // 0: no hot bands
  std::string out = "spectrum";
};

struct AssignArguments {
  PredictionArguments prediction;
  std::string observed;
  std::vector<std::string> isotopologues;  // TAG=N=A,N=A
  std::string scale = "none";
  double expected_error_cm1 = 20.0;
  std::string json_path;
  std::string csv_path;
};

CLI::App* add_spectrum_command(CLI::App& app, SpectrumArguments& arguments);
CLI::App* add_assign_command(CLI::App& app, AssignArguments& arguments);
int run_spectrum(const SpectrumArguments& arguments);
int run_assign(const AssignArguments& arguments);

}  // namespace overtone::cli
