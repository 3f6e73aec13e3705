#include "screen/progress_text.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>

namespace overtone {

namespace {

constexpr double seconds_per_minute = 60.0;
constexpr double seconds_per_hour = 3600.0;

double fraction_done(const ScreenProgress& progress) {
  return progress.total > 0 ? static_cast<double>(progress.finished) / static_cast<double>(progress.total)
                            : 1.0;
}

}  // namespace

std::string duration_text(double seconds) {
  if (!(seconds >= 0.0) || !std::isfinite(seconds)) return "?";
  const long total = std::lround(seconds);
  if (seconds < seconds_per_minute) return fmt::format("{}s", total);
  if (seconds < seconds_per_hour) return fmt::format("{}m{:02}s", total / 60, total % 60);
  return fmt::format("{}h{:02}m", total / 3600, (total % 3600) / 60);
}

std::string progress_bar_line(const ScreenProgress& progress, int bar_width) {
  const double fraction = fraction_done(progress);
  const int filled = std::clamp(static_cast<int>(std::floor(fraction * bar_width)), 0, bar_width);
  std::string line = "[" + std::string(static_cast<std::size_t>(filled), '#') +
                     std::string(static_cast<std::size_t>(bar_width - filled), '.') + "]";
  line += fmt::format("  {}/{}  {:.0f}%  {:.2f} mol/s", progress.finished, progress.total, 100.0 * fraction,
                      progress.rate_per_s);
  if (progress.done)
    line += "  " + duration_text(progress.elapsed_s);
  else if (progress.eta_s > 0.0)
    line += "  ETA " + duration_text(progress.eta_s);
  if (progress.failed > 0) line += fmt::format("  {} failed", progress.failed);
  return line;
}

std::string progress_plain_line(const ScreenProgress& progress) {
  std::string line = fmt::format("screen: {} of {} molecules ({:.0f}%), {} failed, {:.2f} mol/s, {} elapsed",
                                 progress.finished, progress.total, 100.0 * fraction_done(progress),
                                 progress.failed, progress.rate_per_s, duration_text(progress.elapsed_s));
  if (!progress.done && progress.eta_s > 0.0) line += ", about " + duration_text(progress.eta_s) + " left";
  return line;
}

}  // namespace overtone
