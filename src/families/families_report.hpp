#pragma once
// Readable renderings of a FamiliesResult: a short summary, the full text report the
// command line prints, and one CSV table of backbone points per family. Field meanings:
// docs/families.md.
#include <string>

#include "families/families.hpp"

namespace overtone {

// One line per family: number, modes, species, kind of motion, copies, status.
std::string families_summary(const FamiliesResult& result);

// The table of families, then one section per family: its exact symmetry (subgroup
// operations and phases), resonance threats, backbone summary, stability and other
// events, the semiclassical ladder next to the harmonic one, and the cost per point.
std::string families_text_report(const FamiliesResult& result);

// CSV (comma-separated, header row, one row per backbone point in continuation order)
// of family family_index (0-based). Throws Error for an index out of range.
std::string family_points_csv(const FamiliesResult& result, int family_index);

// A file name for that CSV: "family-NN-modes-A-B.csv" (NN = family number, zero-padded).
std::string family_csv_file_name(const FamiliesResult& result, int family_index);

}  // namespace overtone
