#pragma once
// JSON of the families stage. Field-by-field documentation: docs/families.md ("JSON").
#include <nlohmann/json.hpp>

#include "families/families.hpp"

namespace overtone {

// The array for the top-level key "families": one object per family.
nlohmann::json families_to_json(const FamiliesResult& families);

// Totals, model notes and warnings of the families stage (key "families_summary").
nlohmann::json families_summary_to_json(const FamiliesResult& families);

}  // namespace overtone
