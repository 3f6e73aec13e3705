#include "report/spectrum_report.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>

#include "core/text.hpp"

namespace overtone {

namespace {

// Plot geometry (SVG user units).
constexpr double plot_width = 900.0, plot_height = 420.0;
constexpr double margin_left = 60.0, margin_right = 20.0, margin_top = 40.0, margin_bottom = 50.0;
constexpr int axis_ticks = 8;
// Sticks shorter than this fraction of the plot height get no label (they would overlap).
constexpr double min_labelled_fraction = 0.04;

std::string xml_escape(const std::string& text) {
  std::string out;
  for (const char c : text) {
    if (c == '&')
      out += "&amp;";
    else if (c == '<')
      out += "&lt;";
    else if (c == '>')
      out += "&gt;";
    else if (c == '"')
      out += "&quot;";
    else
      out += c;
  }
  return out;
}

std::string csv_cell(const std::string& text) {
  if (text.find_first_of(",\"\n") == std::string::npos) return text;
  std::string quoted = "\"";
  for (const char c : text) quoted += c == '"' ? std::string("\"\"") : std::string(1, c);
  return quoted + "\"";
}

struct Frame {
  double low, high;
  double x(double wavenumber) const {
    return margin_left + (wavenumber - low) / (high - low) * (plot_width - margin_left - margin_right);
  }
  static double y(double fraction) {
    return plot_height - margin_bottom - fraction * (plot_height - margin_top - margin_bottom);
  }
};

// A tick spacing of 1, 2 or 5 times a power of ten giving about axis_ticks intervals.
double tick_step(double span) {
  const double raw = span / axis_ticks;
  const double power = std::pow(10.0, std::floor(std::log10(raw)));
  for (const double factor : {1.0, 2.0, 5.0})
    if (factor * power >= raw) return factor * power;
  return 10.0 * power;
}

std::string axes(const Frame& frame, const SpectrumPlotLabels& labels) {
  std::string out = fmt::format(
      "<line x1=\"{0}\" y1=\"{1}\" x2=\"{2}\" y2=\"{1}\" stroke=\"black\"/>\n"
      "<text x=\"{3}\" y=\"{4}\" text-anchor=\"middle\" font-size=\"13\">wavenumber / cm-1</text>\n"
      "<text x=\"{5}\" y=\"18\" font-size=\"14\">{6}</text>\n"
      "<text x=\"{5}\" y=\"33\" font-size=\"10\" fill=\"#555\">curve and sticks each scaled to their "
      "maximum; sticks: integrated intensity in {7}; red: members of a resonance polyad [polyad number]; "
      "dashed: hot bands</text>\n",
      margin_left, Frame::y(0.0), plot_width - margin_right, 0.5 * (plot_width + margin_left - margin_right),
      plot_height - 10.0, margin_left, xml_escape(labels.title), xml_escape(labels.intensity_unit));
  const double step = tick_step(frame.high - frame.low);
  for (double w = std::ceil(frame.low / step) * step; w <= frame.high + 1e-9 * step; w += step)
    out += fmt::format(
        "<line x1=\"{0:.1f}\" y1=\"{1}\" x2=\"{0:.1f}\" y2=\"{2}\" stroke=\"black\"/>"
        "<text x=\"{0:.1f}\" y=\"{3}\" text-anchor=\"middle\" font-size=\"11\">{4:.0f}</text>\n",
        frame.x(w), Frame::y(0.0), Frame::y(0.0) + 5.0, Frame::y(0.0) + 18.0, w);
  out += fmt::format(
      "<text x=\"20\" y=\"{0}\" font-size=\"12\" transform=\"rotate(-90 20 {0})\" "
      "text-anchor=\"middle\">relative intensity</text>\n",
      0.5 * (plot_height + margin_top - margin_bottom));
  return out;
}

std::string sticks(const Frame& frame, const SpectrumResult& spectrum) {
  double strongest = 0.0;
  for (const SpectrumLine& line : spectrum.lines) strongest = std::max(strongest, line.intensity);
  std::string out;
  for (const SpectrumLine& line : spectrum.lines) {
    const double fraction = strongest > 0.0 ? 0.9 * line.intensity / strongest : 0.0;
    const std::string colour = line.polyad > 0 ? "#c0392b" : "#2c3e50";
    out += fmt::format(
        "<line x1=\"{0:.2f}\" y1=\"{1:.2f}\" x2=\"{0:.2f}\" y2=\"{2:.2f}\" stroke=\"{3}\" "
        "stroke-width=\"2\"{4}/>\n",
        frame.x(line.position_cm1), Frame::y(0.0), Frame::y(fraction), colour,
        line.hot ? " stroke-dasharray=\"4 3\"" : "");
    // Resonance partners keep their label however weak: the mark is what they are drawn for.
    if (fraction < min_labelled_fraction && line.polyad == 0) continue;
    const std::string text =
        line.polyad > 0 ? fmt::format("{} [polyad {}]", line.label, line.polyad) : line.label;
    out += fmt::format(
        "<text x=\"{0:.2f}\" y=\"{1:.2f}\" font-size=\"10\" fill=\"{2}\" text-anchor=\"middle\">{3}</text>\n",
        frame.x(line.position_cm1), Frame::y(fraction) - 4.0, colour, xml_escape(text));
  }
  return out;
}

std::string curve(const Frame& frame, const SpectrumResult& spectrum) {
  const double top = spectrum.intensity.size() > 0 ? spectrum.intensity.maxCoeff() : 0.0;
  std::string points;
  for (Eigen::Index p = 0; p < spectrum.wavenumber_cm1.size(); ++p)
    points += fmt::format("{:.2f},{:.2f} ", frame.x(spectrum.wavenumber_cm1[p]),
                          Frame::y(top > 0.0 ? spectrum.intensity[p] / top : 0.0));
  return "<polyline fill=\"none\" stroke=\"#2874a6\" stroke-width=\"1.2\" points=\"" + points + "\"/>\n";
}

}  // namespace

std::string spectrum_csv(const SpectrumResult& spectrum, const std::string& intensity_column) {
  std::string out = "wavenumber_cm1," + intensity_column + "\n";
  for (Eigen::Index p = 0; p < spectrum.wavenumber_cm1.size(); ++p)
    out += fmt::format("{:.4f},{:.8g}\n", spectrum.wavenumber_cm1[p], spectrum.intensity[p]);
  return out;
}

std::string spectrum_lines_csv(const SpectrumResult& spectrum) {
  std::string out = "label,position_cm1,intensity,polyad,partners,hot\n";
  for (const SpectrumLine& line : spectrum.lines) {
    std::string partners;
    for (const std::string& partner : line.partners) partners += (partners.empty() ? "" : " ") + partner;
    out += fmt::format("{},{:.2f},{:.6g},{},{},{}\n", csv_cell(line.label), line.position_cm1, line.intensity,
                       line.polyad > 0 ? std::to_string(line.polyad) : std::string(), csv_cell(partners),
                       line.hot ? "yes" : "no");
  }
  return out;
}

std::string spectrum_svg(const SpectrumResult& spectrum, const SpectrumPlotLabels& labels) {
  const Frame frame{spectrum.range_min_cm1, spectrum.range_max_cm1};
  std::string out = fmt::format(
      "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"{0}\" "
      "height=\"{1}\" viewBox=\"0 0 {0} {1}\" font-family=\"sans-serif\">\n<rect width=\"{0}\" "
      "height=\"{1}\" "
      "fill=\"white\"/>\n",
      plot_width, plot_height);
  out += axes(frame, labels) + sticks(frame, spectrum) + curve(frame, spectrum);
  return out + "</svg>\n";
}

}  // namespace overtone
