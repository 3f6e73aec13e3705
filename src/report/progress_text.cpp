#include "report/progress_text.hpp"

#include <fmt/format.h>

#include <cmath>
#include <limits>

namespace overtone {

namespace {

constexpr double seconds_per_minute = 60.0;
constexpr double seconds_per_hour = 3600.0;
// Below this a duration keeps a decimal: the short stages of a small molecule.
constexpr double decimal_below_s = 10.0;
// The run time is worth showing only when the run started noticeably before the stage.
constexpr double run_time_margin_s = 0.5;

}  // namespace

double remaining_seconds(const ProgressEvent& event) {
  if (event.total <= 0 || event.done <= 0) return std::numeric_limits<double>::quiet_NaN();
  if (event.done >= event.total) return 0.0;
  return event.seconds * static_cast<double>(event.total - event.done) / static_cast<double>(event.done);
}

std::string elapsed_text(double seconds) {
  if (!std::isfinite(seconds) || seconds < 0.0) return "?";
  if (seconds < decimal_below_s) return fmt::format("{:.1f} s", seconds);
  if (seconds < seconds_per_minute) return fmt::format("{:.0f} s", seconds);
  const long whole = std::lround(seconds);
  if (seconds < seconds_per_hour) return fmt::format("{} min {:02} s", whole / 60, whole % 60);
  return fmt::format("{} h {:02} min", whole / 3600, (whole % 3600) / 60);
}

std::string stage_progress_line(const ProgressEvent& event, double run_seconds) {
  std::string line = event.stage;
  if (event.total > 0)
    line += fmt::format(" {}/{} ({:.0f}%)", event.done, event.total,
                        100.0 * static_cast<double>(event.done) / static_cast<double>(event.total));
  if (!event.detail.empty()) line += ": " + event.detail;
  line += "; " + elapsed_text(event.seconds);
  const double left = remaining_seconds(event);
  if (std::isfinite(left) && left > 0.0) line += ", about " + elapsed_text(left) + " left";
  if (run_seconds > event.seconds + run_time_margin_s)
    line += "; " + elapsed_text(run_seconds) + " since the start";
  return line;
}

}  // namespace overtone
