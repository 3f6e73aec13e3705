#pragma once
// The intensity fields of the JSON document (docs/output-fields.md): per mode
// ir_intensity_km_per_mol, raman_activity_a4_per_u, depolarization_ratio; per level
// ir_intensity_km_per_mol, raman_activity_a4_per_u; the top-level intensity_model.
#include <nlohmann/json.hpp>

#include "pipeline/intensities.hpp"

namespace overtone {

// Adds the fields to a document that already holds the harmonic keys (modes[]) and, when
// the anharmonic stage ran, levels[] in Vpt2Result order. intensities null: every
// intensity is null and intensity_model says why (`unavailable_reason`).
void add_intensity_fields(nlohmann::json& document, const AnalysisResult& analysis,
                          const IntensityResults* intensities, const std::string& unavailable_reason);

}  // namespace overtone
