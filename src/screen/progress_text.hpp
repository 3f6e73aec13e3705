#pragma once
// Progress of a screen as text: a bar for a terminal (redrawn in place) and a plain line
// for a pipe or log file. The command line chooses which and how often.
#include <string>

#include "screen/screen.hpp"

namespace overtone {

// "[#########.........]  412/1000  41%  2.31 mol/s  ETA 4m15s  3 failed", bar_width cells.
std::string progress_bar_line(const ScreenProgress& progress, int bar_width = 30);

// "screen: 412 of 1000 molecules (41%), 3 failed, 2.31 mol/s, 2m58s elapsed, about 4m15s left".
std::string progress_plain_line(const ScreenProgress& progress);

// "4m15s", "1h02m", "37s".
std::string duration_text(double seconds);

}  // namespace overtone
