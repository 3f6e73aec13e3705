#include "pipeline/intensities.hpp"

#include <fstream>
#include <sstream>

#include "core/error.hpp"
#include "intensity/taylor_dipole.hpp"
#include "potential/mmff_potential.hpp"
#include "potential/taylor_expansion_potential.hpp"
#include "potential/valence_force_field.hpp"

namespace overtone {

namespace {

bool ends_with(const std::string& text, const std::string& suffix) {
  return text.size() >= suffix.size() &&
         text.compare(text.size() - suffix.size(), suffix.size(), suffix) == 0;
}

// The `charges` of a valence force-field file, empty when it lists none or is another kind.
std::vector<double> file_charges(const std::string& potential_choice) {
  if (!ends_with(potential_choice, ".toml")) return {};
  try {
    return read_valence_force_field_source(potential_choice).partial_charges;
  } catch (const Error&) {
    return {};  // a Taylor expansion, read as the potential already
  }
}

// The dipole surface of a Taylor-expansion file in normal coordinates, or null.
std::unique_ptr<DipoleSource> taylor_dipole(const std::string& path, const Molecule& molecule) {
  if (!ends_with(path, ".toml") || !is_taylor_expansion_file(path)) return nullptr;
  const TaylorExpansionData data = read_taylor_expansion(path);
  if (data.coordinates != ExpansionCoordinates::normal) return nullptr;
  std::ifstream in(path, std::ios::binary);
  std::ostringstream text;
  text << in.rdbuf();
  DipoleSurfaceTerms terms =
      parse_dipole_surface(text.str(), path, static_cast<int>(data.frequencies_cm1.size()));
  if (terms.empty()) return nullptr;
  return std::make_unique<TaylorDipole>(data, std::move(terms), molecule, path);
}

}  // namespace

std::unique_ptr<DipoleSource> dipole_source_for(const Potential& potential,
                                                const std::string& potential_choice, const Molecule& molecule,
                                                const std::string& electric_response_path) {
  if (!electric_response_path.empty())
    return std::make_unique<PolarTensorDipole>(read_electric_response(electric_response_path), molecule);
  if (auto surface = taylor_dipole(potential_choice, molecule)) return surface;
  if (const auto* mmff = dynamic_cast<const MmffPotential*>(&potential))
    return std::make_unique<FixedChargeDipole>(mmff->partial_charges(), mmff->variant_name());
  const std::vector<double> charges = file_charges(potential_choice);
  if (!charges.empty()) return std::make_unique<FixedChargeDipole>(charges, "valence force-field file");
  try {
    const MmffPotential typed("MMFF94", molecule);
    return std::make_unique<FixedChargeDipole>(
        typed.partial_charges(), "MMFF94, assigned to the molecule; the potential has no charges");
  } catch (const Error&) {
    return nullptr;
  }
}

IntensityResults analyze_intensities(const AnalysisResult& analysis, const AnharmonicResult* anharmonic,
                                     const DipoleSource& source) {
  HarmonicIntensityOptions options;
  if (!analysis.modes.empty()) {
    options.set_of_mode.assign(analysis.modes.size(), 0);
    for (const ModeLabel& label : analysis.modes)
      options.set_of_mode[static_cast<std::size_t>(label.harmonic_index)] = label.degenerate_set;
  }
  IntensityResults results;
  results.harmonic = compute_harmonic_intensities(analysis.harmonic, source, options);
  if (anharmonic)
    results.levels = compute_anharmonic_level_intensities(anharmonic->vpt2, anharmonic->force_constants,
                                                          anharmonic->harmonic, source);
  return results;
}

}  // namespace overtone
