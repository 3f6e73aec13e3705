#include "intensity/level_intensities.hpp"

#include <fmt/format.h>

#include "core/error.hpp"

namespace overtone {

namespace {

// Intensity of a set summed over its modes (the harmonic result stores set means).
std::vector<double> set_totals(const Vpt2Result& vpt2, const Eigen::VectorXd& per_mode) {
  std::vector<double> totals(vpt2.sets.size(), 0.0);
  for (std::size_t s = 0; s < vpt2.sets.size(); ++s)
    for (const int mode : vpt2.sets[s].modes) totals[s] += per_mode[mode];
  return totals;
}

// The set of a single-quantum manifold, or −1.
int fundamental_set(const SparseQuanta& quanta) {
  return quanta.size() == 1 && quanta.front().second == 1 ? quanta.front().first : -1;
}

// Intensity of one level from the set totals; counts the bright fundamentals it mixes.
std::optional<double> level_value(const VibrationalLevel& level, const std::vector<double>& totals,
                                  int& bright_components) {
  bright_components = 0;
  if (!level.in_polyad() || level.mixing.empty()) {
    const int set = fundamental_set(sparse_quanta(level.set_quanta));
    if (set < 0) return std::nullopt;
    return totals[static_cast<std::size_t>(set)];
  }
  double value = 0.0;
  for (const LevelComponent& component : level.mixing) {
    const int set = fundamental_set(component.quanta);
    if (set < 0) continue;
    const double total = totals[static_cast<std::size_t>(set)];
    if (total > 0.0) ++bright_components;
    value += component.weight * total;
  }
  return value;
}

}  // namespace

LevelIntensityResult compute_level_intensities(const Vpt2Result& vpt2,
                                               const HarmonicIntensityResult& harmonic) {
  if (harmonic.ir_km_per_mol.size() != vpt2.harmonic_cm1.size())
    throw Error(fmt::format("level intensities: the harmonic intensities have {} modes, the VPT2 result {}",
                            harmonic.ir_km_per_mol.size(), vpt2.harmonic_cm1.size()));
  LevelIntensityResult result;
  result.treatment =
      "double-harmonic moments of the fundamentals, shared inside each resonance polyad by the fundamental's "
      "mixing weight; overtones and combinations outside polyads: not computed (null)";
  const std::vector<double> ir = set_totals(vpt2, harmonic.ir_km_per_mol);
  std::vector<double> raman;
  if (harmonic.has_raman) raman = set_totals(vpt2, harmonic.raman_activity_a4_per_u);
  std::vector<bool> warned(vpt2.polyads.size(), false);
  for (const VibrationalLevel& level : vpt2.levels) {
    int bright = 0;
    result.ir_km_per_mol.push_back(level_value(level, ir, bright));
    int bright_raman = 0;
    result.raman_activity_a4_per_u.push_back(harmonic.has_raman ? level_value(level, raman, bright_raman)
                                                                : std::nullopt);
    if (std::max(bright, bright_raman) > 1 && !warned[static_cast<std::size_t>(level.polyad)]) {
      warned[static_cast<std::size_t>(level.polyad)] = true;
      result.warnings.push_back(fmt::format(
          "polyad {} mixes more than one bright fundamental: its intensities neglect their interference",
          level.polyad + 1));
    }
  }
  return result;
}

}  // namespace overtone
