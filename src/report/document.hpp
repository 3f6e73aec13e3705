#pragma once
// The report stage's single entry: from the results of one run to the JSON document
// (analysis.json and every --json), the console text and the set of output files. The
// command line only chooses what to run and where to write.
//
// Shape: every stage writer (harmonic_to_json, anharmonic_to_json, families_to_json,
// resonance_cross_check_to_json) returns an object whose members are top-level keys of the
// document; analysis_document merges them and refuses a key written twice. Every string
// in the document is valid UTF-8 (text from input files passes through valid_utf8).
#include <nlohmann/json.hpp>
#include <ostream>
#include <string>
#include <vector>

#include "pipeline/analysis.hpp"
#include "pipeline/intensities.hpp"
#include "pipeline/orbit_frames.hpp"
#include "report/anharmonic_report.hpp"
#include "report/output_folder.hpp"

namespace overtone {

// What one run computed. The analysis is always there; a later stage is either a result
// or the reason it was skipped (both empty: not requested).
struct RunResults {
  const AnalysisResult* analysis = nullptr;
  const AnharmonicResult* anharmonic = nullptr;
  std::string anharmonic_skipped;
  const FamiliesResult* families = nullptr;
  std::string families_skipped;
  // Intensities (src/pipeline/intensities.hpp); null with a reason, or null and empty when
  // not requested (then the document has no intensity fields).
  const IntensityResults* intensities = nullptr;
  std::string intensities_skipped;
  // Frames of the families' periodic orbits for the animations (top-level key
  // family_orbits); null: none drawn.
  const OrbitFramesResult* family_orbits = nullptr;
};

// Top-level key family_orbits: one entry per family and energy, with its frames.
nlohmann::json family_orbits_to_json(const OrbitFramesResult& orbits);

// Top-level key resonance_cross_check: one entry per Fermi 1:2 pair listed by either
// stage (docs/output-fields.md).
nlohmann::json resonance_cross_check_to_json(const std::vector<ResonanceCrossCheck>& checks);

// One line per cross-checked pair, e.g. "2ν2 / ν1 (gap -8.0 cm-1): perturbative: allowed,
// treated in a polyad; families: allowed for 1 of 2 family types; agree".
std::string resonance_cross_check_line(const ResonanceCrossCheck& check);

// The whole JSON document of a run. Throws Error when results.analysis is null.
nlohmann::json analysis_document(const RunResults& results);

// The document as text: two-space indentation, a final newline; any string that is not
// valid UTF-8 is replaced rather than refused.
std::string json_text(const nlohmann::json& document);
// The same text written to a stream as it is produced (no copy of the whole text).
void write_json(std::ostream& out, const nlohmann::json& document);

struct TextReportOptions {
  // summary: what the console shows (fits a few screens at fifty modes: the anharmonic
  // summary of AnharmonicReportOptions, one line per family, only the cross-check pairs
  // where the stages disagree); full: every list and matrix (report.txt, --full-report).
  ReportDetail detail = ReportDetail::summary;
  // Where the full lists were written, said in the summary (AnharmonicReportOptions).
  std::string full_lists_note;

  void validate() const;  // throws Error naming the field that is out of range
};

// The console report: the modes table, then each later stage that ran, then (when both
// ran) the resonance cross-check.
std::string text_report(const RunResults& results, const TextReportOptions& options = {});

// The files of `overtone analyze`: analysis.json, modes.csv, lines.csv (when the
// anharmonic stage ran), families/family-NN-nuK.csv (one per continued family), report.html
// and animations/*.xyz (report/html_report.hpp).
std::vector<OutputFile> analysis_files(const RunResults& results);

// One backbone CSV per continued family, named with the ν numbers (family_csv_file_name).
std::vector<OutputFile> family_backbone_files(const AnalysisResult& analysis, const FamiliesResult& families,
                                              const std::string& subfolder = "");

// The quartic force field of the anharmonic stage as a Taylor-expansion file in normal
// coordinates (docs/taylor-expansion-format.md), titled after the molecule and potential.
std::string taylor_expansion_text(const AnalysisResult& analysis, const AnharmonicResult& anharmonic);

}  // namespace overtone
