#pragma once
// Progress of a long stage, reported through a callback in the stage's Options so that the
// library never prints: the command line decides whether and how to show it (a status line
// on a terminal, nothing on a pipe unless asked).
#include <functional>
#include <string>

namespace overtone {

struct ProgressEvent {
  std::string stage;     // "optimize", "force constants", "families", ...
  int done = 0;          // units of work finished (families continued, constants computed, ...)
  int total = 0;         // units of work in the stage; 0 when unknown
  std::string detail;    // what is being worked on now, e.g. "family 3 of 40: ν4 at 2,310 cm⁻¹"
  double seconds = 0.0;  // wall time since the stage started
};

// Called from the thread running the stage (or from several worker threads, never at the
// same time: a stage that runs work in parallel serializes its calls). Must not throw.
using ProgressCallback = std::function<void(const ProgressEvent&)>;

}  // namespace overtone
