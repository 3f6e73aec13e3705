#pragma once
// Text report and CSV line list of the anharmonic stage (columns: docs/anharmonic.md).
//
// Mode numbering: labels use one number per degenerate set ("ν2" for both components of
// a doubly degenerate bend). The numbers come from AnharmonicReportOptions::set_numbers;
// set_numbers_from_mode_order() derives them from the report order of the modes that the
// rest of the program uses, and default_set_numbers() numbers sets by descending harmonic
// wavenumber (common practice when species are unknown).
#include <string>
#include <vector>

#include "anharmonic/force_constants.hpp"
#include "anharmonic/vpt2.hpp"

namespace overtone {

// Number (1-based) of each set in order of first appearance in mode_order, where
// mode_order[k] is the harmonic index of reported mode k + 1. Throws Error when mode_order
// is not a permutation of the modes.
std::vector<int> set_numbers_from_mode_order(const Vpt2Result& vpt2, const std::vector<int>& mode_order);
// Sets numbered by descending harmonic wavenumber.
std::vector<int> default_set_numbers(const Vpt2Result& vpt2);

struct AnharmonicReportOptions {
  std::vector<int> set_numbers;  // per set (index into Vpt2Result::sets); empty: default_set_numbers
  bool ascii = false;            // "v2" and "2v1+v3" instead of "ν₂"-style Greek (CSV keeps its own rule)
};

// "ν1", "2ν2", "ν1+ν3" (numbers in ascending order); ASCII uses "v".
std::string level_label(const std::vector<int>& set_quanta, const std::vector<int>& set_numbers,
                        bool ascii = false);
// "2ν2 / ν1" style description of a resonance's partners.
std::string resonance_label(const Resonance& resonance, const std::vector<int>& set_numbers,
                            bool ascii = false);

// The line list as CSV text (UTF-8, header row, one row per level sorted by the best
// position: resonance-corrected where a polyad applies, else anharmonic). Throws Error for
// set_numbers of the wrong length.
std::string line_list_csv(const Vpt2Result& vpt2, const AnharmonicReportOptions& options = {});

// The readable report for `overtone anharmonic`: force-constant summary and evaluation
// counts, anharmonicity constants, resonances, levels.
std::string anharmonic_report(const ForceConstantResult& force_constants, const Vpt2Result& vpt2,
                              const AnharmonicReportOptions& options = {});

}  // namespace overtone
