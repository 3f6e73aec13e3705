#pragma once
// Small conversions shared by the JSON writers of the report stage.
#include <cmath>
#include <nlohmann/json.hpp>

namespace overtone {

// JSON has no NaN or infinity: a value that is not finite (not computed, not defined
// for a model system) is written as null.
inline nlohmann::json number_or_null(double value) {
  return std::isfinite(value) ? nlohmann::json(value) : nlohmann::json(nullptr);
}

}  // namespace overtone
