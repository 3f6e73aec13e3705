#pragma once
// Writers of `overtone spectrum`: the broadened curve as CSV and the plot as SVG.
#include <string>

#include "spectrum/spectrum.hpp"

namespace overtone {

struct SpectrumPlotLabels {
  std::string title;           // e.g. "H2O, infrared (anharmonic), lorentz 10 cm-1"
  std::string intensity_unit;  // of the sticks, e.g. "km/mol"
};

// Header "wavenumber_cm1,intensity_<unit>_per_cm1" then one row per grid point; the
// stick lines follow in a second CSV (spectrum_lines_csv).
std::string spectrum_csv(const SpectrumResult& spectrum, const std::string& intensity_column);
// label,position_cm1,intensity,polyad,partners,hot
std::string spectrum_lines_csv(const SpectrumResult& spectrum);

// A self-contained SVG: the curve scaled to its maximum, the sticks under it scaled to the
// strongest stick, members of a resonance polyad drawn in their own colour with the polyad
// number, hot bands dashed, axes in cm⁻¹.
std::string spectrum_svg(const SpectrumResult& spectrum, const SpectrumPlotLabels& labels);

}  // namespace overtone
