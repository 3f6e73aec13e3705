#pragma once
// One line of text for a ProgressEvent of a long stage: the command line redraws it on a
// terminal or prints it now and then on a pipe (--progress).
#include <string>

#include "core/progress.hpp"

namespace overtone {

// Time still needed by the stage, extrapolated linearly from the share done
// (seconds · (total − done) / done); NaN when there is nothing to extrapolate from (no
// total, nothing done yet) and 0 when the stage is done.
double remaining_seconds(const ProgressEvent& event);

// "0.4 s", "12 s", "4 min 05 s", "1 h 02 min".
std::string elapsed_text(double seconds);

// "force constants 54/109 (50%): displaced Hessians; 1.2 s, about 1.1 s left", or without
// counts "optimize; 0.3 s". run_seconds (the whole run so far) is added when at least the
// stage's time: "; 5.0 s since the start".
std::string stage_progress_line(const ProgressEvent& event, double run_seconds);

}  // namespace overtone
