#pragma once
// Plain-text report of a point-group analysis for the console (`overtone symmetry`):
// the group, how far symmetrization moved the atoms, the axes of the symmetry frame
// (docs/symmetry.md), the operations, the character
// table with functions and activities, and the decomposition of the vibrational
// representation; with mode data, the species of each mode set as well.
// Typographic labels (subscript digits, primes, Greek letters); UTF-8.
#include <string>

#include "symmetry/detect_point_group.hpp"
#include "symmetry/mode_symmetry.hpp"

namespace overtone {

struct SymmetryReportOptions {
  bool show_operations = true;  // the table of operations with axes and atom permutations
  bool show_character_table = true;
  // Operations tables are long for large groups; beyond this many operations only the
  // classes are listed.
  int max_operations_listed = 48;

  void validate() const;  // throws Error naming the field that is out of range
};

// Never throws for a result produced by detect_point_group / assign_mode_species, with
// valid options.
std::string format_symmetry_report(const PointGroupResult& group, const ModeSymmetryResult* modes = nullptr,
                                   const SymmetryReportOptions& options = {});

// Text width of a UTF-8 string in terminal columns (one per code point).
std::size_t display_width(const std::string& utf8);

}  // namespace overtone
