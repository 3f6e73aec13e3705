#include "spectrum/spectrum.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>

#include "core/error.hpp"
#include "core/units.hpp"

namespace overtone {

namespace {

// A line contributes nothing visible beyond this many widths from its centre on a Gaussian;
// a Lorentzian's wings are summed over the whole grid.
constexpr double gauss_cutoff_widths = 12.0;
// Default margin of the grid beyond the outermost lines, in widths.
constexpr double range_margin_widths = 10.0;

double lorentz(double fwhm, double d) {
  const double half = 0.5 * fwhm;
  return half / (units::pi * (d * d + half * half));
}

double gauss(double fwhm, double d) {
  const double ln2 = std::log(2.0);
  return (2.0 / fwhm) * std::sqrt(ln2 / units::pi) * std::exp(-4.0 * ln2 * d * d / (fwhm * fwhm));
}

// Thompson–Cox–Hastings total width and mixing for Gaussian and Lorentzian widths fg, fl.
void pseudo_voigt_parameters(double fg, double fl, double& total, double& eta) {
  total = std::pow(std::pow(fg, 5) + 2.69269 * std::pow(fg, 4) * fl + 2.42843 * std::pow(fg, 3) * fl * fl +
                       4.47163 * fg * fg * std::pow(fl, 3) + 0.07842 * fg * std::pow(fl, 4) + std::pow(fl, 5),
                   0.2);
  const double ratio = fl / total;
  eta = 1.36603 * ratio - 0.47719 * ratio * ratio + 0.11116 * ratio * ratio * ratio;
}

void grid_range(const std::vector<SpectrumLine>& lines, const SpectrumOptions& options, double& low,
                double& high) {
  double lowest = 0.0, highest = 0.0;
  for (std::size_t i = 0; i < lines.size(); ++i) {
    lowest = i == 0 ? lines[i].position_cm1 : std::min(lowest, lines[i].position_cm1);
    highest = i == 0 ? lines[i].position_cm1 : std::max(highest, lines[i].position_cm1);
  }
  const double margin = range_margin_widths * options.fwhm_cm1;
  low = options.min_cm1 ? *options.min_cm1 : std::max(0.0, lowest - margin);
  high = options.max_cm1 ? *options.max_cm1 : highest + margin;
  if (!(high > low))
    throw Error(fmt::format("spectrum range must have its end above its start, got {}:{}", low, high));
}

}  // namespace

LineShape line_shape_from_string(const std::string& name) {
  if (name == "lorentz") return LineShape::lorentz;
  if (name == "gauss") return LineShape::gauss;
  if (name == "voigt") return LineShape::voigt;
  throw Error("line shape must be lorentz, gauss or voigt, got '" + name + "'");
}

std::string to_string(LineShape shape) {
  switch (shape) {
    case LineShape::lorentz:
      return "lorentz";
    case LineShape::gauss:
      return "gauss";
    case LineShape::voigt:
      return "voigt";
  }
  return "";
}

void validate(const SpectrumOptions& options) {
  if (!(std::isfinite(options.fwhm_cm1) && options.fwhm_cm1 > 0.0))
    throw Error(fmt::format("spectrum width (fwhm_cm1) must be a positive number, got {}", options.fwhm_cm1));
  if (!(std::isfinite(options.step_cm1) && options.step_cm1 > 0.0))
    throw Error(fmt::format("spectrum step (step_cm1) must be a positive number, got {}", options.step_cm1));
  for (const auto& end : {options.min_cm1, options.max_cm1})
    if (end && !std::isfinite(*end)) throw Error("spectrum range ends must be finite numbers");
}

double line_shape_value(LineShape shape, double fwhm_cm1, double offset_cm1) {
  switch (shape) {
    case LineShape::lorentz:
      return lorentz(fwhm_cm1, offset_cm1);
    case LineShape::gauss:
      return gauss(fwhm_cm1, offset_cm1);
    case LineShape::voigt: {
      double total = 0.0, eta = 0.0;
      pseudo_voigt_parameters(fwhm_cm1, fwhm_cm1, total, eta);
      return eta * lorentz(total, offset_cm1) + (1.0 - eta) * gauss(total, offset_cm1);
    }
  }
  return 0.0;
}

SpectrumResult broaden_lines(const std::vector<SpectrumLine>& lines, const SpectrumOptions& options) {
  validate(options);
  for (const SpectrumLine& line : lines)
    if (!std::isfinite(line.position_cm1) || !std::isfinite(line.intensity))
      throw Error("spectrum line '" + line.label + "' has a position or intensity that is not finite");
  SpectrumResult result;
  if (lines.empty()) throw Error("a spectrum needs at least one line with a known intensity, got none");
  grid_range(lines, options, result.range_min_cm1, result.range_max_cm1);
  const double span = (result.range_max_cm1 - result.range_min_cm1) / options.step_cm1;
  if (span + 1.0 > static_cast<double>(options.max_points))
    throw Error(fmt::format("spectrum grid would hold {:.0f} points, at most {} are allowed (a larger step?)",
                            span + 1.0, options.max_points));
  const Eigen::Index points = static_cast<Eigen::Index>(std::floor(span + 1e-9)) + 1;
  result.wavenumber_cm1 = Eigen::VectorXd::LinSpaced(points, result.range_min_cm1,
                                                     result.range_min_cm1 + (points - 1) * options.step_cm1);
  result.intensity = Eigen::VectorXd::Zero(points);
  int outside = 0;
  for (const SpectrumLine& line : lines) {
    const bool inside =
        line.position_cm1 >= result.range_min_cm1 && line.position_cm1 <= result.range_max_cm1;
    if (inside)
      result.lines.push_back(line);
    else
      ++outside;
    const double reach =
        options.shape == LineShape::gauss ? gauss_cutoff_widths * options.fwhm_cm1 : INFINITY;
    for (Eigen::Index p = 0; p < points; ++p) {
      const double d = result.wavenumber_cm1[p] - line.position_cm1;
      if (std::abs(d) <= reach)
        result.intensity[p] += line.intensity * line_shape_value(options.shape, options.fwhm_cm1, d);
    }
  }
  if (outside > 0)
    result.warnings.push_back(
        fmt::format("{} lines lie outside the range and only their wings are drawn", outside));
  return result;
}

}  // namespace overtone
