#pragma once
// The point group's operations and character table as members of the JSON document's
// `symmetry` object (docs/output-fields.md), so that a report built from the document
// alone can show them.
#include <nlohmann/json.hpp>

#include "symmetry/detect_point_group.hpp"
#include "symmetry/mode_symmetry.hpp"

namespace overtone {

// Members display_name, vibrational_representation_display, operations[] and
// character_table of `symmetry`.
nlohmann::json symmetry_tables_to_json(const PointGroupResult& group, const ModeSymmetryResult& modes);

}  // namespace overtone
