#pragma once
// JSON of the families stage. Field-by-field documentation: docs/families.md ("JSON").
#include <nlohmann/json.hpp>

#include "families/families.hpp"
#include "pipeline/analysis.hpp"

namespace overtone {

// The families sections of the JSON document: an object whose members are the top-level
// keys "families" (one object per family) and "families_summary" (totals, model notes and
// warnings), the shape of every stage writer (see harmonic_to_json). The analysis gives
// the ν numbers and the ASCII names of the point-group operations.
nlohmann::json families_to_json(const AnalysisResult& analysis, const FamiliesResult& families);

}  // namespace overtone
