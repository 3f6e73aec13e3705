#include "spectrum/predicted_levels.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <map>
#include <numeric>

#include "core/error.hpp"
#include "core/units.hpp"

namespace overtone {

namespace {

using nlohmann::json;

// Lines weaker than this fraction of the strongest are round-off, not bands: a forbidden
// band's intensity is ~1e-30 of an allowed one, the weakest observable ~1e-6.
constexpr double negligible_fraction = 1e-12;

const json& field(const json& object, const char* key, const std::string& where) {
  if (!object.is_object() || !object.contains(key))
    throw Error(fmt::format("analysis document: {} lacks the field '{}'", where, key));
  return object.at(key);
}

double number_field(const json& object, const char* key, const std::string& where) {
  const json& value = field(object, key, where);
  if (!value.is_number()) throw Error(fmt::format("analysis document: {}.{} must be a number", where, key));
  return value.get<double>();
}

std::optional<double> optional_number(const json& object, const char* key) {
  if (!object.contains(key) || !object.at(key).is_number()) return std::nullopt;
  return object.at(key).get<double>();
}

std::optional<bool> optional_bool(const json& object, const char* key) {
  if (!object.contains(key) || !object.at(key).is_boolean()) return std::nullopt;
  return object.at(key).get<bool>();
}

std::string optional_string(const json& object, const char* key) {
  return object.contains(key) && object.at(key).is_string() ? object.at(key).get<std::string>()
                                                            : std::string();
}

std::optional<double> add(const std::optional<double>& a, const std::optional<double>& b) {
  if (!a || !b) return std::nullopt;
  return *a + *b;
}

// One level per ν number: the degenerate members carry set means, the level the sum.
std::vector<PredictedLevel> harmonic_levels(const json& modes) {
  std::map<int, PredictedLevel> by_fundamental;
  int largest = 0;
  for (const json& mode : modes)
    largest = std::max(largest, static_cast<int>(number_field(mode, "fundamental", "modes[]")));
  for (const json& mode : modes) {
    const int nu = static_cast<int>(number_field(mode, "fundamental", "modes[]"));
    const bool first = by_fundamental.count(nu) == 0;
    PredictedLevel& level = by_fundamental[nu];
    if (first) {
      level.label = "ν" + std::to_string(nu);
      level.kind = "fundamental";
      level.quanta.assign(static_cast<std::size_t>(largest), 0);
      level.quanta[static_cast<std::size_t>(nu - 1)] = 1;
      level.species = optional_string(mode, "species");
      level.ir_active = optional_bool(mode, "ir_active");
      level.raman_active = optional_bool(mode, "raman_active");
      level.position_cm1 = level.harmonic_cm1 = number_field(mode, "frequency_cm1", "modes[]");
      level.ir_intensity_km_per_mol = optional_number(mode, "ir_intensity_km_per_mol");
      level.raman_activity_a4_per_u = optional_number(mode, "raman_activity_a4_per_u");
    } else {
      level.ir_intensity_km_per_mol =
          add(level.ir_intensity_km_per_mol, optional_number(mode, "ir_intensity_km_per_mol"));
      level.raman_activity_a4_per_u =
          add(level.raman_activity_a4_per_u, optional_number(mode, "raman_activity_a4_per_u"));
    }
  }
  std::vector<PredictedLevel> levels;
  for (auto& entry : by_fundamental) levels.push_back(std::move(entry.second));
  return levels;
}

PredictedLevel anharmonic_level(const json& entry) {
  PredictedLevel level;
  level.label = field(entry, "label", "levels[]").get<std::string>();
  level.kind = optional_string(entry, "kind");
  for (const json& q : field(entry, "quanta", "levels[]")) level.quanta.push_back(q.get<int>());
  level.total_quanta = std::accumulate(level.quanta.begin(), level.quanta.end(), 0);
  level.sublevel =
      entry.contains("sublevel") && entry.at("sublevel").is_number() ? entry.at("sublevel").get<int>() : 1;
  level.species = optional_string(entry, "species");
  level.ir_active = optional_bool(entry, "ir_active");
  level.raman_active = optional_bool(entry, "raman_active");
  level.harmonic_cm1 = number_field(entry, "harmonic_cm1", "levels[]");
  const std::optional<double> corrected = optional_number(entry, "resonance_corrected_cm1");
  level.position_cm1 = corrected ? *corrected : number_field(entry, "anharmonic_cm1", "levels[]");
  level.ir_intensity_km_per_mol = optional_number(entry, "ir_intensity_km_per_mol");
  level.raman_activity_a4_per_u = optional_number(entry, "raman_activity_a4_per_u");
  if (const std::optional<double> polyad = optional_number(entry, "polyad"))
    level.polyad = static_cast<int>(*polyad);
  if (entry.contains("partners"))
    for (const json& partner : entry.at("partners")) level.partners.push_back(partner.get<std::string>());
  return level;
}

}  // namespace

bool is_totally_symmetric_species(const std::string& species) {
  static const char* const labels[] = {"A", "A1", "A'", "A1'", "Ag", "A1g", "Sigma+", "Sigma_g+"};
  return std::any_of(std::begin(labels), std::end(labels),
                     [&](const char* label) { return species == label; });
}

PredictedSpectrum predicted_from_document(const nlohmann::json& document, bool anharmonic) {
  PredictedSpectrum predicted;
  if (!document.is_object()) throw Error("analysis document: expected a JSON object at the top level");
  if (document.contains("molecule")) {
    predicted.molecule = optional_string(document.at("molecule"), "title");
    if (predicted.molecule.empty()) predicted.molecule = optional_string(document.at("molecule"), "formula");
  }
  if (document.contains("potential"))
    predicted.potential = optional_string(document.at("potential"), "description");
  if (document.contains("intensity_model")) {
    predicted.intensity_source = optional_string(document.at("intensity_model"), "source");
    predicted.intensity_notes = optional_string(document.at("intensity_model"), "notes");
  }
  const bool has_levels = document.contains("levels") && document.at("levels").is_array();
  predicted.anharmonic = anharmonic && has_levels;
  if (predicted.anharmonic) {
    for (const json& entry : document.at("levels")) predicted.levels.push_back(anharmonic_level(entry));
  } else {
    predicted.levels = harmonic_levels(field(document, "modes", "the document"));
  }
  for (PredictedLevel& level : predicted.levels)
    level.totally_symmetric = is_totally_symmetric_species(level.species);
  return predicted;
}

namespace {

std::optional<double> intensity_of(const PredictedLevel& level, SpectrumKind kind) {
  return kind == SpectrumKind::infrared ? level.ir_intensity_km_per_mol : level.raman_activity_a4_per_u;
}

const PredictedLevel* find_level(const PredictedSpectrum& predicted, const std::vector<int>& quanta) {
  for (const PredictedLevel& level : predicted.levels)
    if (level.quanta == quanta) return &level;
  return nullptr;
}

}  // namespace

std::vector<SpectrumLine> spectrum_lines(const PredictedSpectrum& predicted, SpectrumKind kind) {
  double strongest = 0.0;
  for (const PredictedLevel& level : predicted.levels)
    strongest = std::max(strongest, intensity_of(level, kind).value_or(0.0));
  std::vector<SpectrumLine> lines;
  for (const PredictedLevel& level : predicted.levels) {
    const std::optional<double> value = intensity_of(level, kind);
    // Symmetry-forbidden bands come out as round-off (~1e-30 of the allowed ones).
    if (!value || !(*value > negligible_fraction * strongest)) continue;
    lines.push_back({level.position_cm1, *value, level.label, level.polyad, level.partners, false});
  }
  return lines;
}

std::vector<SpectrumLine> lines_with_hot_bands(const PredictedSpectrum& predicted, SpectrumKind kind,
                                               double temperature_k, double min_relative) {
  if (!(std::isfinite(temperature_k) && temperature_k > 0.0))
    throw Error(fmt::format("temperature must be a positive number of kelvin, got {}", temperature_k));
  std::vector<const PredictedLevel*> fundamentals;
  double log_partition = 0.0;  // harmonic oscillators, one per mode vector
  for (const PredictedLevel& level : predicted.levels)
    if (level.total_quanta == 1 && level.sublevel == 1) {
      fundamentals.push_back(&level);
      log_partition -=
          std::log1p(-std::exp(-units::second_radiation_constant_cm_k * level.harmonic_cm1 / temperature_k));
    }
  const double ground = std::exp(-log_partition);
  std::vector<SpectrumLine> lines = spectrum_lines(predicted, kind);
  double strongest = 0.0;
  for (SpectrumLine& line : lines) {
    line.intensity *= ground;
    strongest = std::max(strongest, line.intensity);
  }
  if (!predicted.anharmonic) return lines;
  for (const PredictedLevel* lower : fundamentals) {
    const double population =
        ground * std::exp(-units::second_radiation_constant_cm_k * lower->position_cm1 / temperature_k);
    for (const PredictedLevel* upper : fundamentals) {
      const std::optional<double> cold = intensity_of(*upper, kind);
      if (!cold || !(*cold > 0.0)) continue;
      std::vector<int> quanta = lower->quanta;
      for (std::size_t i = 0; i < quanta.size(); ++i) quanta[i] += upper->quanta[i];
      const PredictedLevel* final_level = find_level(predicted, quanta);
      if (!final_level) continue;
      const double factor = lower == upper ? 2.0 : 1.0;  // |⟨2|q|1⟩|² = 2|⟨1|q|0⟩|²
      const double intensity = factor * *cold * population;
      if (intensity < min_relative * strongest) continue;
      lines.push_back({final_level->position_cm1 - lower->position_cm1,
                       intensity,
                       final_level->label + "-" + lower->label,
                       0,
                       {},
                       true});
    }
  }
  return lines;
}

}  // namespace overtone
