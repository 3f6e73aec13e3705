#pragma once
// The HTML report: one self-contained page (every script, style and number inlined; it
// opens from disk with no network) built from the JSON document of a run alone, so that
// `overtone report OUTDIR` can rebuild it from OUTDIR/analysis.json without computing
// anything. Sections (docs/html-report.md): summary, modes with 3-D animations, levels and
// resonances, spectrum (with an optional measured spectrum or band list), families with
// their backbones, the VPT2 slope and ladders, orbit animations, symmetry. A section whose
// data the document lacks says so instead of failing.
//
// Also the multi-frame XYZ animations (animations/mode-NN.xyz, animations/family-NN.xyz)
// that any molecular viewer plays.
#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <vector>

#include "report/output_folder.hpp"

namespace overtone {

// A measured spectrum or band list laid over the computed one.
struct ObservedSpectrum {
  struct Band {
    double wavenumber_cm1 = 0.0;
    std::optional<double> intensity;  // any unit; absent: a band position only
  };
  std::string source;  // file name as given, shown on the page
  std::vector<Band> bands;
};

// Limits of a --observed file: a digitized spectrum of 0.1 cm⁻¹ resolution over
// 0–10 000 cm⁻¹ has 100 000 points; more would make the page heavy for no visible gain.
inline constexpr std::size_t max_observed_rows = 200000;
inline constexpr double max_observed_wavenumber_cm1 = 100000.0;

// CSV text with a header row naming the column wavenumber_cm1 and optionally intensity or
// relative_intensity (the band lists of `overtone assign` read as they are; other columns are ignored;
// comma-separated; lines starting with '#' and blank lines skipped; an empty intensity cell is an unknown
// intensity). Throws Error (with the line number) for a missing column, a cell that is not a number, a
// wavenumber outside (0, 100000] cm⁻¹, a non-finite intensity, no data row, or more than max_observed_rows.
ObservedSpectrum parse_observed_csv(const std::string& text, const std::string& source);

struct HtmlReportOptions {
  std::optional<ObservedSpectrum> observed;
  // Frames of one period in the page's mode animations and in animations/mode-NN.xyz.
  int mode_frames = 20;

  // Throws Error naming the field that is out of range (mode_frames, a band of observed).
  void validate() const;
};

// The page. Throws Error when the document lacks what every run writes (atoms, modes).
std::string html_report(const nlohmann::json& document, const HtmlReportOptions& options = {});

// Largest displacement of an atom (Å) when mode k (index into document["modes"]) swings to
// the classical turning point of its v = 1 level, E = (3/2)ħω = ½ω²Q²: the amplitude of the
// mode animations. Null when the mode has no mass-weighted vector.
std::vector<double> mode_animation_scales_angstrom(const nlohmann::json& document);

// animations/mode-NN.xyz: one period of mode k (index into document["modes"]) at the
// amplitude above, `frames` frames; NN is the mode number.
std::string mode_animation_xyz(const nlohmann::json& document, std::size_t mode_index, int frames);

// animations/family-NN.xyz: the orbits of family NN stored in document["family_orbits"],
// one period per requested energy, one after the other. Empty when the document holds none.
std::string family_animation_xyz(const nlohmann::json& document, int family);

// report.html and animations/*.xyz for the output folder of `overtone analyze`.
std::vector<OutputFile> report_files(const nlohmann::json& document, const HtmlReportOptions& options = {});

}  // namespace overtone
