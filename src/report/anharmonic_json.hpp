#pragma once
// JSON of the anharmonic stage: force constants, anharmonicity constants, levels and
// resonances. Field-by-field documentation: docs/output-fields.md ("Anharmonic").
#include <nlohmann/json.hpp>

#include "pipeline/analysis.hpp"

namespace overtone {

// The anharmonic sections of the JSON document: an object whose members are the top-level
// keys force_constants, anharmonicity, levels, resonances and anharmonic_summary (the shape
// of every stage writer, see harmonic_to_json). Mode indices are report mode numbers
// (AnalysisResult::modes) and ν numbers as in the modes table.
nlohmann::json anharmonic_to_json(const AnalysisResult& analysis, const AnharmonicResult& anharmonic);

}  // namespace overtone
