#pragma once
// Simulated spectra: stick lines (position, integrated intensity) broadened on a grid.
//
// Line shapes, each normalized to unit area (so the integral of the curve over a line
// equals its stick intensity, and the curve is in intensity units per cm⁻¹), with W the full
// width at half maximum and d = ν̃ − ν̃₀:
//   lorentz  L(d) = (W/2) / (π (d² + (W/2)²))
//   gauss    G(d) = (2/W) √(ln 2/π) exp(−4 ln 2 d²/W²)
//   voigt    the pseudo-Voigt η L + (1 − η) G of a Lorentzian and a Gaussian component of
//            equal width W, with the total width and η of P. Thompson, D. E. Cox and
//            J. B. Hastings, J. Appl. Cryst. 20, 79 (1987) (from memory; 1 % accurate
//            against the exact Voigt profile).
// Hot bands: transitions ν_i + ν_j ← ν_j (and 2ν_j ← ν_j) out of the thermally populated
// fundamentals ν_j, at the VPT2 positions E(ν_i+ν_j) − E(ν_j); in the double-harmonic
// approximation each carries the cold band's moment (times 2 for 2ν_j ← ν_j), weighted by
// the Boltzmann population of ν_j; the cold bands are weighted by the ground-state
// population. Populations use the harmonic-oscillator partition function of the
// fundamentals (common practice, no source).
#include <Eigen/Dense>
#include <optional>
#include <string>
#include <vector>

namespace overtone {

enum class LineShape { lorentz, gauss, voigt };
LineShape line_shape_from_string(const std::string& name);  // throws Error for another name
std::string to_string(LineShape shape);

struct SpectrumLine {
  double position_cm1 = 0.0;
  double intensity = 0.0;             // integrated (km/mol, or Å⁴/u for Raman)
  std::string label;                  // e.g. "ν1", "2ν2", "ν1+ν2-ν2" for a hot band
  int polyad = 0;                     // 1-based resonance polyad, 0 when none
  std::vector<std::string> partners;  // labels of the other polyad members
  bool hot = false;
};

struct SpectrumOptions {
  LineShape shape = LineShape::lorentz;
  double fwhm_cm1 = 10.0;  // full width at half maximum, cm⁻¹ (> 0)
  double step_cm1 = 1.0;   // grid spacing, cm⁻¹ (> 0)
  // Grid range, cm⁻¹; unset: from 0 (or the lowest line − 10 W) to the highest line + 10 W.
  std::optional<double> min_cm1;
  std::optional<double> max_cm1;
  // A grid larger than this is refused (a typing slip such as --step 1e-9).
  std::size_t max_points = 2000000;
};

// Throws Error naming the first invalid field.
void validate(const SpectrumOptions& options);

struct SpectrumResult {
  Eigen::VectorXd wavenumber_cm1;
  Eigen::VectorXd intensity;        // per cm⁻¹
  std::vector<SpectrumLine> lines;  // the sticks inside the range
  double range_min_cm1 = 0.0;
  double range_max_cm1 = 0.0;
  std::vector<std::string> warnings;  // lines left outside the range, no intensity at all, ...
};

// Value of the unit-area shape at offset d (cm⁻¹) for width W.
double line_shape_value(LineShape shape, double fwhm_cm1, double offset_cm1);

// Broadens the lines on the grid. Throws Error for invalid options or a non-finite line.
SpectrumResult broaden_lines(const std::vector<SpectrumLine>& lines, const SpectrumOptions& options);

}  // namespace overtone
