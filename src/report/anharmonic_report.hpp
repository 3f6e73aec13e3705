#pragma once
// Text report and CSV line list of the anharmonic stage (columns: docs/anharmonic.md).
//
// Mode numbering: labels use one number per degenerate set ("ν2" for both components of
// a doubly degenerate bend). The numbers come from AnharmonicReportOptions::set_numbers
// (AnharmonicResult::set_numbers for an analysed molecule, see pipeline/mode_numbering.hpp);
// without them sets are numbered by default_set_numbers.
#include <string>
#include <vector>

#include "anharmonic/force_constants.hpp"
#include "anharmonic/vpt2.hpp"
#include "intensity/level_intensities.hpp"
#include "pipeline/mode_numbering.hpp"

namespace overtone {

// How much a text report shows. summary: what fits on a few screens at fifty modes (the
// fundamentals with their shifts and the levels mixed with them, the resonances that pass
// the criterion and a count of the others, x only on the diagonal); full: every resonance
// candidate, the x matrices and every level of the line list.
enum class ReportDetail { summary, full };

struct AnharmonicReportOptions {
  std::vector<int> set_numbers;  // per set (index into Vpt2Result::sets); empty: default_set_numbers
  bool ascii = false;            // "v2" and "2v1+v3" instead of "ν₂"-style Greek (CSV keeps its own rule)
  ReportDetail detail = ReportDetail::summary;
  // Where the full matrices and lists were written (summary only), e.g. "report.txt (full
  // text), analysis.json, lines.csv in overtone-out"; empty: the report says how to get them.
  std::string full_lists_note;
  // Line-list intensities (per Vpt2Result level) for the CSV's intensity columns; null:
  // the columns stay empty.
  const LevelIntensityResult* intensities = nullptr;

  void validate() const;  // throws Error naming the field that is out of range
};

// "ν1", "2ν2", "ν1+ν3" (numbers in ascending order); ASCII uses "v".
std::string level_label(const std::vector<int>& set_quanta, const std::vector<int>& set_numbers,
                        bool ascii = false);
// "2ν2 / ν1" style description of a resonance's partners.
std::string resonance_label(const Resonance& resonance, const std::vector<int>& set_numbers,
                            bool ascii = false);

// "φ(ν54,ν54,ν36)": a force constant named by the ν numbers of its modes (harmonic indices).
std::string term_label(const std::vector<int>& modes, const Vpt2Result& vpt2,
                       const std::vector<int>& set_numbers, bool ascii = false);

// The line list as CSV text (UTF-8, header row, one row per level sorted by the best
// position: resonance-corrected where a polyad applies, else anharmonic). Throws Error for
// set_numbers of the wrong length.
std::string line_list_csv(const Vpt2Result& vpt2, const AnharmonicReportOptions& options = {});

// The readable report for `overtone anharmonic`: force-constant summary and evaluation
// counts, then (options.detail) the summary or the full anharmonicity constants, resonances
// and levels.
std::string anharmonic_report(const ForceConstantResult& force_constants, const Vpt2Result& vpt2,
                              const AnharmonicReportOptions& options = {});

}  // namespace overtone
