// Broadened spectra: line shapes against their closed forms (area, height, width), the
// pseudo-Voigt width against an independent Voigt-width formula, hot bands against the
// Boltzmann factor, and the predicted levels read back from a document.
#include <gtest/gtest.h>

#include <cmath>

#include "core/error.hpp"
#include "core/units.hpp"
#include "spectrum/predicted_levels.hpp"
#include "spectrum/spectrum.hpp"

namespace overtone {
namespace {

// Trapezoid sums of smooth shapes sampled at W/80: relative error ~1e-6.
constexpr double quadrature_tolerance = 1e-5;
// Closed-form values evaluated directly: round-off only.
constexpr double closed_form_tolerance = 1e-12;
// The pseudo-Voigt is within 1 % of the exact Voigt profile (Thompson, Cox, Hastings
// 1987); the Olivero–Longbothum width formula is good to 0.02 % (from memory).
constexpr double voigt_width_tolerance = 0.01;

double trapezoid(const SpectrumResult& s) {
  double sum = 0.0;
  for (Eigen::Index p = 1; p < s.wavenumber_cm1.size(); ++p)
    sum += 0.5 * (s.intensity[p] + s.intensity[p - 1]) * (s.wavenumber_cm1[p] - s.wavenumber_cm1[p - 1]);
  return sum;
}

// Full width at half maximum of a single peak on the grid, by linear interpolation.
double measured_fwhm(const SpectrumResult& s) {
  Eigen::Index top = 0;
  s.intensity.maxCoeff(&top);
  const double half = 0.5 * s.intensity[top];
  auto crossing = [&](Eigen::Index from, int direction) {
    Eigen::Index p = from;
    while (s.intensity[p + direction] > half) p += direction;
    const double a = s.intensity[p], b = s.intensity[p + direction];
    return s.wavenumber_cm1[p] +
           direction * (a - half) / (a - b) * (s.wavenumber_cm1[1] - s.wavenumber_cm1[0]);
  };
  return crossing(top, 1) - crossing(top, -1);
}

TEST(Spectrum, GaussianAndLorentzianKeepTheStickArea) {
  const std::vector<SpectrumLine> lines = {{1000.0, 5.0, "a", 0, {}, false},
                                           {1500.0, 2.0, "b", 0, {}, false}};
  SpectrumOptions options;
  options.fwhm_cm1 = 4.0;
  options.step_cm1 = 0.05;
  options.min_cm1 = 0.0;
  options.max_cm1 = 3000.0;
  options.shape = LineShape::gauss;
  EXPECT_NEAR(trapezoid(broaden_lines(lines, options)) / 7.0, 1.0, quadrature_tolerance);
  // A Lorentzian's area inside [a, b] is (1/π)[atan(2(b−ν₀)/W) − atan(2(a−ν₀)/W)] (closed form).
  options.shape = LineShape::lorentz;
  double inside = 0.0;
  for (const SpectrumLine& line : lines)
    inside += line.intensity / units::pi *
              (std::atan(2.0 * (3000.0 - line.position_cm1) / 4.0) -
               std::atan(2.0 * (0.0 - line.position_cm1) / 4.0));
  EXPECT_NEAR(trapezoid(broaden_lines(lines, options)) / inside, 1.0, quadrature_tolerance);
}

TEST(Spectrum, PeakHeightsAndWidthsFollowTheClosedForms) {
  // Heights: Lorentzian 2/(πW), Gaussian (2/W)√(ln2/π) per unit area (closed forms).
  const double w = 8.0;
  EXPECT_NEAR(line_shape_value(LineShape::lorentz, w, 0.0), 2.0 / (units::pi * w), closed_form_tolerance);
  EXPECT_NEAR(line_shape_value(LineShape::gauss, w, 0.0), 2.0 / w * std::sqrt(std::log(2.0) / units::pi),
              closed_form_tolerance);
  EXPECT_NEAR(line_shape_value(LineShape::gauss, w, w / 2) / line_shape_value(LineShape::gauss, w, 0.0), 0.5,
              closed_form_tolerance);
  EXPECT_NEAR(line_shape_value(LineShape::lorentz, w, w / 2) / line_shape_value(LineShape::lorentz, w, 0.0),
              0.5, closed_form_tolerance);
  // Voigt of equal Gaussian and Lorentzian widths W: FWHM ≈ 0.5346 W + √(0.2166 + 1) W
  // (J. J. Olivero and R. L. Longbothum, J. Quant. Spectrosc. Radiat. Transfer 17, 233
  // (1977); from memory), an estimate independent of the pseudo-Voigt's own width formula.
  SpectrumOptions options;
  options.shape = LineShape::voigt;
  options.fwhm_cm1 = w;
  options.step_cm1 = 0.01;
  const SpectrumResult s = broaden_lines({{500.0, 1.0, "a", 0, {}, false}}, options);
  const double expected = (0.5346 + std::sqrt(0.2166 + 1.0)) * w;
  EXPECT_NEAR(measured_fwhm(s) / expected, 1.0, voigt_width_tolerance);
}

TEST(Spectrum, RefusesBadOptions) {
  SpectrumOptions options;
  options.fwhm_cm1 = 0.0;
  EXPECT_THROW(validate(options), Error);
  options = {};
  options.step_cm1 = 1e-9;
  EXPECT_THROW(broaden_lines({{500.0, 1.0, "a", 0, {}, false}}, options), Error);
  EXPECT_THROW(line_shape_from_string("triangle"), Error);
  EXPECT_THROW(broaden_lines({}, SpectrumOptions{}), Error);
}

// Two modes, their overtones and the combination, as a VPT2 line list.
PredictedSpectrum two_mode_model() {
  PredictedSpectrum p;
  p.anharmonic = true;
  auto level = [](std::string label, std::vector<int> quanta, double position, std::optional<double> ir) {
    PredictedLevel l;
    l.label = std::move(label);
    l.quanta = std::move(quanta);
    l.total_quanta = l.quanta[0] + l.quanta[1];
    l.position_cm1 = position;
    l.harmonic_cm1 = position + 10.0 * l.total_quanta;
    l.ir_intensity_km_per_mol = ir;
    return l;
  };
  p.levels = {level("ν1", {1, 0}, 1600.0, 50.0), level("ν2", {0, 1}, 300.0, 10.0),
              level("2ν1", {2, 0}, 3180.0, std::nullopt), level("2ν2", {0, 2}, 596.0, std::nullopt),
              level("ν1+ν2", {1, 1}, 1890.0, std::nullopt)};
  return p;
}

TEST(Spectrum, HotBandsFollowTheBoltzmannFactor) {
  // ν1+ν2 ← ν2 at E(ν1+ν2) − E(ν2) with the cold band's strength times exp(−c₂ν₂/T) (the
  // harmonic matrix element is the same); 2ν2 ← ν2 carries twice ν2's (closed forms).
  const double t = 300.0;
  const PredictedSpectrum model = two_mode_model();
  const std::vector<SpectrumLine> lines = lines_with_hot_bands(model, SpectrumKind::infrared, t);
  const double boltzmann = std::exp(-units::second_radiation_constant_cm_k * 300.0 / t);
  const SpectrumLine* cold1 = nullptr;
  const SpectrumLine* hot1 = nullptr;
  const SpectrumLine* hot2 = nullptr;
  for (const SpectrumLine& line : lines) {
    if (line.label == "ν1" && !line.hot) cold1 = &line;
    if (line.label == "ν1+ν2-ν2") hot1 = &line;
    if (line.label == "2ν2-ν2") hot2 = &line;
  }
  ASSERT_TRUE(cold1 && hot1 && hot2);
  EXPECT_NEAR(hot1->position_cm1, 1590.0, closed_form_tolerance);
  EXPECT_NEAR(hot1->intensity / cold1->intensity, boltzmann, closed_form_tolerance);
  EXPECT_NEAR(hot2->position_cm1, 296.0, closed_form_tolerance);
  EXPECT_NEAR(hot2->intensity / (cold1->intensity / 50.0 * 10.0), 2.0 * boltzmann, closed_form_tolerance);
  EXPECT_THROW(lines_with_hot_bands(model, SpectrumKind::infrared, -1.0), Error);
}

TEST(PredictedLevels, HarmonicDocumentGivesOneLevelPerFundamentalWithTheSetTotal) {
  const nlohmann::json document = nlohmann::json::parse(R"({
    "molecule": {"title": "model", "formula": "X"},
    "modes": [
      {"fundamental": 1, "frequency_cm1": 1000.0, "species": "A1", "ir_active": true, "raman_active": true,
       "ir_intensity_km_per_mol": 3.0, "raman_activity_a4_per_u": null},
      {"fundamental": 2, "frequency_cm1": 500.0, "species": "E", "ir_active": true, "raman_active": true,
       "ir_intensity_km_per_mol": 2.0, "raman_activity_a4_per_u": null},
      {"fundamental": 2, "frequency_cm1": 500.0, "species": "E", "ir_active": true, "raman_active": true,
       "ir_intensity_km_per_mol": 2.0, "raman_activity_a4_per_u": null}]})");
  const PredictedSpectrum p = predicted_from_document(document, true);
  ASSERT_EQ(p.levels.size(), 2u);
  EXPECT_FALSE(p.anharmonic);
  EXPECT_EQ(p.levels[1].label, "ν2");
  EXPECT_DOUBLE_EQ(*p.levels[1].ir_intensity_km_per_mol, 4.0);
  EXPECT_FALSE(p.levels[1].raman_activity_a4_per_u.has_value());
  EXPECT_TRUE(p.levels[0].totally_symmetric);
  EXPECT_FALSE(p.levels[1].totally_symmetric);
  EXPECT_THROW(
      predicted_from_document(nlohmann::json::parse(R"({"modes": [{"frequency_cm1": 1.0}]})"), false), Error);
}

}  // namespace
}  // namespace overtone
