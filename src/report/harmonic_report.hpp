#pragma once
// Reports of the harmonic analysis: console table, JSON sections, CSV of modes.
// Field-by-field documentation: docs/output-fields.md.
#include <nlohmann/json.hpp>
#include <string>

#include "pipeline/analysis.hpp"

namespace overtone {

// The harmonic sections of the JSON document: an object whose members are top-level keys
// (program, units, molecule, potential, point_group, symmetry, atoms, optimization,
// harmonic, modes, warnings). Every stage writer of the report has this shape; the
// document builder (report/document.hpp) merges them.
nlohmann::json harmonic_to_json(const AnalysisResult& analysis);

// One row per mode, in report order; header names the units.
std::string modes_csv(const AnalysisResult& analysis);

// Readable console table of the modes with a short header (molecule, potential,
// optimization outcome) and any warnings. One block per fundamental: its ν number,
// species, wavenumber, degeneracy and activity first, then each of its mode vectors with
// its reduced mass and stiffness.
std::string modes_table(const AnalysisResult& analysis);

}  // namespace overtone
