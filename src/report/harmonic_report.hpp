#pragma once
// Reports of the harmonic analysis: console table, JSON document, CSV of modes.
// Field-by-field documentation: docs/output-fields.md.
#include <nlohmann/json.hpp>
#include <string>

#include "pipeline/analysis.hpp"

namespace overtone {

// The JSON document of an analysis (atoms, optimization, modes, ...).
nlohmann::json analysis_to_json(const AnalysisResult& analysis);

// One row per mode, in report order; header names the units.
std::string modes_csv(const AnalysisResult& analysis);

// Readable console table of the modes with a short header (molecule, potential,
// optimization outcome) and any warnings.
std::string modes_table(const AnalysisResult& analysis);

}  // namespace overtone
