#include "families/orbit_count.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <limits>

#include "core/error.hpp"
#include "core/option_checks.hpp"
#include "families/families.hpp"

namespace overtone {

int distinct_orbits_per_family_orbit(const FamilyType& type) {
  // A copy that is the time reverse of another traces the same curve backwards.
  if (type.time_reversal == TimeReversal::among_copies) return std::max(1, type.copies / 2);
  return type.copies;
}

namespace {

// The energies along a family, from where it begins: 0 for a family from the minimum,
// the birth energy for one born at a bifurcation.
std::vector<double> family_energies(const FamilyResult& family) {
  std::vector<double> energies;
  if (!family.continued || family.backbone.points.empty()) return energies;
  energies.push_back(family.parent_family >= 0 ? family.birth_energy : 0.0);
  for (const OrbitPoint& point : family.backbone.points) energies.push_back(point.energy);
  return energies;
}

// Backbone segments of one family crossing the level `energy`.
int crossings(const std::vector<double>& energies, double energy) {
  int count = 0;
  for (std::size_t i = 1; i < energies.size(); ++i)
    if ((energies[i - 1] < energy) != (energies[i] < energy)) ++count;
  return count;
}

struct LevelCount {
  int finite = 0;
  int continuous = 0;
};

LevelCount count_at(const std::vector<FamilyResult>& families,
                    const std::vector<std::vector<double>>& energies, double energy) {
  LevelCount count;
  for (std::size_t f = 0; f < families.size(); ++f) {
    const int segments = crossings(energies[f], energy);
    if (segments == 0) continue;
    if (families[f].type.continuous_copies)
      ++count.continuous;
    else
      count.finite += segments * distinct_orbits_per_family_orbit(families[f].type);
  }
  return count;
}

// The count on every level of [low, high]: piecewise constant between the families' point
// energies, so it is evaluated once between each pair of neighbouring breakpoints.
OrbitCountBand count_band(const std::vector<FamilyResult>& families,
                          const std::vector<std::vector<double>>& energies, double low, double high,
                          int degrees_of_freedom, double cm1_per_energy) {
  std::vector<double> breakpoints = {low, high};
  for (const auto& list : energies)
    for (const double e : list)
      if (e > low && e < high) breakpoints.push_back(e);
  std::sort(breakpoints.begin(), breakpoints.end());
  breakpoints.erase(std::unique(breakpoints.begin(), breakpoints.end()), breakpoints.end());
  OrbitCountBand band;
  band.energy_low = low;
  band.energy_high = high;
  band.energy_low_cm1 = low * cm1_per_energy;
  band.energy_high_cm1 = high * cm1_per_energy;
  band.fewest = std::numeric_limits<int>::max();
  band.continuous_families = std::numeric_limits<int>::max();
  for (std::size_t i = 1; i < breakpoints.size(); ++i) {
    const double middle = 0.5 * (breakpoints[i - 1] + breakpoints[i]);
    const LevelCount count = count_at(families, energies, middle);
    if (count.finite < band.fewest) {
      band.fewest = count.finite;
      band.fewest_energy_cm1 = middle * cm1_per_energy;
    }
    band.most = std::max(band.most, count.finite);
    band.continuous_families = std::min(band.continuous_families, count.continuous);
  }
  for (std::size_t f = 0; f < families.size(); ++f) {
    const auto& list = energies[f];
    if (list.size() < 2) continue;
    const auto [lowest, highest] = std::minmax_element(list.begin() + 1, list.end());
    if (*highest >= low && *lowest <= high) ++band.families_present;
  }
  band.meets_lower_bound = band.continuous_families > 0 || band.fewest >= degrees_of_freedom;
  return band;
}

}  // namespace

void OrbitCountOptions::validate() const {
  option_checks::require_at_least("orbit count", "bands", bands, 1);
}

OrbitCount count_orbits(const std::vector<FamilyResult>& families, int degrees_of_freedom,
                        double cm1_per_energy, const std::string& energy_label,
                        const OrbitCountOptions& options, std::vector<std::string>& warnings) {
  options.validate();
  if (degrees_of_freedom < 1)
    throw Error(fmt::format("degrees of freedom must be at least 1, got {}", degrees_of_freedom));
  OrbitCount result;
  result.degrees_of_freedom = degrees_of_freedom;
  std::vector<std::vector<double>> energies;
  // Up to the smallest energy every family was asked to reach (per-family ranges differ
  // with FamiliesOptions::quanta); a family that stops below it lowers the count.
  double top = std::numeric_limits<double>::infinity();
  for (const FamilyResult& family : families) {
    if (!family.continued) result.complete = false;
    energies.push_back(family_energies(family));
    if (family.continued) top = std::min(top, family.energy_max);
  }
  if (!std::isfinite(top) || !(top > 0.0)) return result;
  for (int b = 0; b < options.bands; ++b) {
    const double low = top * b / options.bands;
    const double high = top * (b + 1) / options.bands;
    result.bands.push_back(count_band(families, energies, low, high, degrees_of_freedom, cm1_per_energy));
    const OrbitCountBand& band = result.bands.back();
    if (result.complete && !band.meets_lower_bound)
      warnings.push_back(fmt::format(
          "only {} distinct periodic orbits at {:.6g} {} (band {:.6g}-{:.6g}), fewer than the {} degrees of "
          "freedom that every level near the minimum carries: a family was lost or ended early",
          band.fewest, band.fewest_energy_cm1, energy_label, band.energy_low_cm1, band.energy_high_cm1,
          degrees_of_freedom));
  }
  return result;
}

}  // namespace overtone
