#pragma once
// Readable renderings of a FamiliesResult: a short summary, the full text report the
// command line prints, and one CSV table of backbone points per family. Field meanings:
// docs/families.md.
//
// Naming of the modes: with the labels of an analysed molecule (AnalysisResult::modes)
// a family is named by the ν number of its fundamental, the number the modes table shows
// and --mode takes ("ν2"); without labels (model systems) by the families' own mode
// numbers ("modes 2,3").
#include <string>
#include <vector>

#include "families/families.hpp"
#include "pipeline/mode_numbering.hpp"

namespace overtone {

// One line per family: number, fundamental (or modes), species, kind of motion, copies,
// status.
std::string families_summary(const FamiliesResult& result, const std::vector<ModeLabel>& modes = {});

// The heading, notes and warnings and the table of families (one line per family: its
// fundamental, species, motion, points, frequency at the start and the end, energy reached,
// status): the console summary.
std::string families_summary_text(const FamiliesResult& result, const std::vector<ModeLabel>& modes = {});

// The summary text, then one section per family: its exact symmetry (subgroup
// operations and phases), resonance threats, backbone summary, stability and other
// events, the semiclassical ladder next to the harmonic one, and the cost per point.
std::string families_text_report(const FamiliesResult& result, const std::vector<ModeLabel>& modes = {});

// CSV (comma-separated, header row, one row per backbone point in continuation order)
// of family family_index (0-based). Throws Error for an index out of range.
std::string family_points_csv(const FamiliesResult& result, int family_index);

// A file name for that CSV: "family-NN-nuK.csv" with labels (NN = family number,
// zero-padded; K = ν number), "family-NN-modes-A-B.csv" without.
std::string family_csv_file_name(const FamiliesResult& result, int family_index,
                                 const std::vector<ModeLabel>& modes = {});

}  // namespace overtone
