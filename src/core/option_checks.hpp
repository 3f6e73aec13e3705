#pragma once
// Checks shared by the validate() of every stage's Options struct. Each throws Error with
// one message shape: "<owner> option <field>: expected <constraint>, found <value>", so
// that a user sees which field of which stage is wrong, what it may be and what it was.
#include <fmt/format.h>

#include <cmath>
#include <string_view>

#include "core/error.hpp"

namespace overtone::option_checks {

template <typename Value>
void require(bool holds, std::string_view owner, std::string_view field, std::string_view expected,
             const Value& found) {
  if (!holds) throw Error(fmt::format("{} option {}: expected {}, found {}", owner, field, expected, found));
}

// value > 0 and finite (a NaN is refused).
inline void require_positive(std::string_view owner, std::string_view field, double value) {
  require(value > 0.0 && std::isfinite(value), owner, field, "a finite positive number", value);
}

// value ≥ 0 and finite.
inline void require_non_negative(std::string_view owner, std::string_view field, double value) {
  require(value >= 0.0 && std::isfinite(value), owner, field, "a finite number >= 0", value);
}

// Counts: value ≥ minimum.
inline void require_at_least(std::string_view owner, std::string_view field, long long value,
                             long long minimum) {
  require(value >= minimum, owner, field, fmt::format("a whole number >= {}", minimum), value);
}

// low < value ≤ high (a fraction, a step with an upper bound of sense).
inline void require_in_left_open(std::string_view owner, std::string_view field, double value, double low,
                                 double high) {
  require(value > low && value <= high, owner, field, fmt::format("a number in ({}, {}]", low, high), value);
}

// low < value < high.
inline void require_in_open(std::string_view owner, std::string_view field, double value, double low,
                            double high) {
  require(value > low && value < high, owner, field, fmt::format("a number in ({}, {})", low, high), value);
}

}  // namespace overtone::option_checks
