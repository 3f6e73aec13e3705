// Fuzz target: the BANDS.csv reader (parse_observed_bands) on arbitrary text, then the
// assignment of the bands read to a small model of predicted levels.
#include <cstddef>
#include <cstdint>
#include <string>

#include "assign/assignment.hpp"
#include "core/error.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string text(reinterpret_cast<const char*>(data), size);
  try {
    const std::vector<overtone::ObservedBand> bands = overtone::parse_observed_bands(text, "fuzz input");
    if (bands.size() > 64) return 0;  // the assignment is O(n³); the reader is what is fuzzed
    overtone::PredictedSpectrum model;
    for (int k = 1; k <= 3; ++k) {
      overtone::PredictedLevel level;
      level.label = "v" + std::to_string(k);
      level.quanta = {k == 1, k == 2, k == 3};
      level.position_cm1 = 1000.0 * k;
      model.levels.push_back(level);
    }
    const std::vector<overtone::IsotopologueLevels> levels = {{"", model}};
    volatile double sink = overtone::assign_bands(bands, levels).total_cost;
    (void)sink;
  } catch (const overtone::Error&) {
    // Bad input reported the documented way (e.g. an isotopologue nothing was predicted for).
  }
  return 0;
}
