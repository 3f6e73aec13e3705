#include "report/intensity_json.hpp"

#include <cmath>

namespace overtone {

namespace {

using nlohmann::json;

json number_or_null(double value) { return std::isfinite(value) ? json(value) : json(nullptr); }
json optional_or_null(const std::optional<double>& value) { return value ? json(*value) : json(nullptr); }

void add_mode_fields(json& modes, const AnalysisResult& analysis, const IntensityResults* intensities) {
  for (std::size_t m = 0; m < analysis.modes.size() && m < modes.size(); ++m) {
    const Eigen::Index k = analysis.modes[m].harmonic_index;
    json& mode = modes[m];
    const HarmonicIntensityResult* h = intensities ? &intensities->harmonic : nullptr;
    mode["ir_intensity_km_per_mol"] = h ? json(h->ir_km_per_mol[k]) : json(nullptr);
    const bool raman = h && h->has_raman;
    mode["raman_activity_a4_per_u"] = raman ? json(h->raman_activity_a4_per_u[k]) : json(nullptr);
    mode["depolarization_ratio"] = raman ? number_or_null(h->depolarization_ratio[k]) : json(nullptr);
  }
}

void add_level_fields(json& levels, const IntensityResults* intensities) {
  const LevelIntensityResult* l = intensities && intensities->levels ? &*intensities->levels : nullptr;
  for (std::size_t i = 0; i < levels.size(); ++i) {
    levels[i]["ir_intensity_km_per_mol"] = l ? optional_or_null(l->ir_km_per_mol[i]) : json(nullptr);
    levels[i]["raman_activity_a4_per_u"] =
        l ? optional_or_null(l->raman_activity_a4_per_u[i]) : json(nullptr);
  }
}

json model_object(const IntensityResults* intensities, const std::string& unavailable_reason) {
  if (!intensities) return {{"source", nullptr}, {"notes", unavailable_reason}};
  const HarmonicIntensityResult& h = intensities->harmonic;
  json model = {
      {"source", h.source},
      {"notes", h.notes},
      {"approximation", "double harmonic: dipole and polarizability linear in the normal coordinates"},
      {"raman", h.has_raman},
      {"warnings", h.warnings}};
  if (h.crawford.available)
    model["crawford_sum_rule"] = {{"modes_km_per_mol", h.crawford.modes_km_per_mol},
                                  {"atoms_km_per_mol", h.crawford.atoms_km_per_mol},
                                  {"translation_km_per_mol", h.crawford.translation_km_per_mol},
                                  {"rotation_km_per_mol", h.crawford.rotation_km_per_mol},
                                  {"relative_residual", h.crawford.relative_residual}};
  if (intensities->levels) {
    model["levels"] = intensities->levels->treatment;
    for (const std::string& warning : intensities->levels->warnings) model["warnings"].push_back(warning);
  }
  return model;
}

}  // namespace

void add_intensity_fields(nlohmann::json& document, const AnalysisResult& analysis,
                          const IntensityResults* intensities, const std::string& unavailable_reason) {
  if (document.contains("modes")) add_mode_fields(document["modes"], analysis, intensities);
  if (document.contains("levels")) add_level_fields(document["levels"], intensities);
  document["intensity_model"] = model_object(intensities, unavailable_reason);
}

}  // namespace overtone
