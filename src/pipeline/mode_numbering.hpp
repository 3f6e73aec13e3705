#pragma once
// The one place where harmonic indices (columns of HarmonicResult, ascending wavenumber)
// become the numbers the user sees: the mode number of each vector (1-based, unique) and
// the ν number of each fundamental (shared by the members of a degenerate set). Every
// report, JSON field, CSV column, file name and the command line's --mode use these.
//
// Numbering rule (common practice, no source; the convention of Herzberg's tables): by
// species in the character table's textbook order, then by descending wavenumber; a
// degenerate set takes one ν number. Linear triatomics follow the custom of calling the
// bend ν2. Without species: descending wavenumber, one ν number per vector.
#include <string>
#include <vector>

#include "anharmonic/vpt2.hpp"
#include "harmonic/harmonic.hpp"
#include "symmetry/mode_symmetry.hpp"

namespace overtone {

// One reported normal mode: where it sits in the harmonic result and its labels.
struct ModeLabel {
  int harmonic_index = 0;       // column of HarmonicResult::mass_weighted_modes
  int number = 0;               // 1-based position in the report (unique per vector)
  int fundamental = 0;          // ν number: shared by the members of a degenerate set
  int degenerate_set = 0;       // 1-based id shared by the members of a set
  int set_size = 1;             // 1, 2, 3, ...
  std::string species;          // ASCII Mulliken label, empty without symmetry
  std::string display_species;  // typographic label
  bool ir_active = false;
  bool raman_active = false;
  bool activity_known = false;  // false when species could not be assigned
};

// The labels of every mode in report order. species may be null (no point group); with
// species, its sets decide the grouping. atom_count tells a triatomic.
std::vector<ModeLabel> number_modes(const HarmonicResult& harmonic, const ModeSymmetryResult* species,
                                    std::size_t atom_count);

// Harmonic index of each reported mode, in report order.
std::vector<int> report_mode_order(const std::vector<ModeLabel>& modes);

// Mode number of each harmonic index (indexed by harmonic index).
std::vector<int> mode_number_of_index(const std::vector<ModeLabel>& modes);

// ν number of the mode with this mode number. Throws Error for a number the list lacks.
int fundamental_of_mode_number(const std::vector<ModeLabel>& modes, int number);

// The distinct ν numbers of these mode numbers, ascending. Throws like
// fundamental_of_mode_number.
std::vector<int> fundamentals_of_mode_numbers(const std::vector<ModeLabel>& modes,
                                              const std::vector<int>& numbers);

// Mode numbers of the modes of the given fundamentals (ν numbers), in the order given.
// Throws Error naming a ν number the molecule lacks.
std::vector<int> mode_numbers_of_fundamentals(const std::vector<ModeLabel>& modes,
                                              const std::vector<int>& fundamentals);

// ν number (1-based) of each VPT2 set, by first appearance of its modes in mode_order,
// where mode_order[k] is the harmonic index of reported mode k + 1. Throws Error when
// mode_order is not a permutation of the modes.
std::vector<int> set_numbers_from_mode_order(const Vpt2Result& vpt2, const std::vector<int>& mode_order);

// VPT2 sets numbered by descending harmonic wavenumber (common practice when species are
// unknown), for results computed without an analysis.
std::vector<int> default_set_numbers(const Vpt2Result& vpt2);

}  // namespace overtone
