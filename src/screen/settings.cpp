#include "screen/settings.hpp"

#include <fmt/format.h>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <sstream>

#include "core/error.hpp"
#include "screen/hashing.hpp"

namespace overtone {

namespace {

// The same limits as the families command (README, "Commands"): beyond 20 quanta a quartic
// surface has long turned over; 100 000 cm⁻¹ is above every chemical bond's dissociation
// energy (common practice, no source).
constexpr double max_family_quanta = 20.0;
constexpr double max_family_energy_cm1 = 100000.0;
// A symmetry tolerance above 1 Å would merge atoms of different bonds.
constexpr double max_symmetry_tolerance_angstrom = 1.0;
constexpr const char* program_version = "overtone 0.1.0";

}  // namespace

std::string to_string(ScreenStages stages) {
  switch (stages) {
    case ScreenStages::harmonic:
      return "harmonic";
    case ScreenStages::anharmonic:
      return "anharmonic";
    case ScreenStages::families:
      return "families";
  }
  return "anharmonic";
}

ScreenStages screen_stages_from_string(const std::string& name) {
  for (ScreenStages stages : {ScreenStages::harmonic, ScreenStages::anharmonic, ScreenStages::families})
    if (to_string(stages) == name) return stages;
  throw Error(fmt::format("--stages must be harmonic, anharmonic or families, got '{}'", name));
}

void ScreenSettings::validate() const {
  if (potential.empty()) throw Error("the potential of a screen must be named, got an empty name");
  if (family_energy_max_cm1 != 0.0 && !(std::isfinite(family_energy_max_cm1) && family_energy_max_cm1 > 0.0 &&
                                        family_energy_max_cm1 <= max_family_energy_cm1))
    throw Error(fmt::format("--energy-max must be an energy in cm-1 in the range 0 < value <= {}, got {}",
                            max_family_energy_cm1, family_energy_max_cm1));
  if (!(std::isfinite(family_quanta) && family_quanta > 0.0 && family_quanta <= max_family_quanta))
    throw Error(fmt::format("--quanta must be a number of quanta in the range 0 < value <= {}, got {}",
                            max_family_quanta, family_quanta));
  if (!(std::isfinite(vpt2_exclude_below_cm1) && vpt2_exclude_below_cm1 >= 0.0))
    throw Error(fmt::format("--vpt2-exclude-below must be a wavenumber >= 0 in cm-1, got {}",
                            vpt2_exclude_below_cm1));
  if (!(std::isfinite(symmetry_tolerance_angstrom) && symmetry_tolerance_angstrom > 0.0 &&
        symmetry_tolerance_angstrom <= max_symmetry_tolerance_angstrom))
    throw Error(fmt::format("--symmetry-tolerance must be in the range 0 < value <= {} Å, got {}",
                            max_symmetry_tolerance_angstrom, symmetry_tolerance_angstrom));
}

nlohmann::json settings_json(const ScreenSettings& settings) {
  nlohmann::json document;
  document["program"] = program_version;
  document["results_version"] = screen_results_version;
  document["potential"] = settings.potential;
  std::error_code ec;
  if (std::filesystem::is_regular_file(settings.potential, ec)) {
    std::ifstream stream(settings.potential, std::ios::binary);
    if (!stream) throw Error(fmt::format("potential file '{}' cannot be read", settings.potential));
    std::ostringstream content;
    content << stream.rdbuf();
    document["potential_file_sha256"] = sha256_hex(content.str());
  }
  document["stages"] = to_string(settings.stages);
  document["levels"] = settings.levels;
  document["symmetry_tolerance_angstrom"] = settings.symmetry_tolerance_angstrom;
  // Written only when set, so that the runs stored before this setting existed (all of
  // them without exclusion) keep their hash and a rerun resumes them.
  if (settings.stages != ScreenStages::harmonic && settings.vpt2_exclude_below_cm1 > 0.0)
    document["vpt2_exclude_below_cm1"] = settings.vpt2_exclude_below_cm1;
  if (settings.stages == ScreenStages::families) {
    document["all_families"] = settings.all_families;
    if (settings.family_energy_max_cm1 > 0.0)
      document["family_energy_max_cm1"] = settings.family_energy_max_cm1;
    else
      document["family_quanta"] = settings.family_quanta;
  }
  return document;
}

std::string settings_hash(const nlohmann::json& settings_document) {
  return sha256_hex(settings_document.dump());  // nlohmann::json keeps keys sorted
}

}  // namespace overtone
