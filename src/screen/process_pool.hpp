#pragma once
// Work in child processes, so that nothing one molecule does (a crash inside a library,
// an abort, an endless loop, memory that is never freed) reaches the process that keeps
// the store. Every task runs in a fresh fork(2) of this process; it reports the stage it
// enters and finally its result through a pipe. The parent enforces the time limit by
// killing the child (SIGKILL), and the children are killed by the kernel when the parent
// dies (PR_SET_PDEATHSIG), so a killed screen leaves no orphans computing on.
//
// Not thread-safe; one pool per process. A child never returns into the caller's code: it
// ends with _exit after its work, without running destructors or atexit handlers of the
// parent's objects.
#include <cstddef>
#include <functional>
#include <memory>
#include <string>
#include <vector>

namespace overtone {

// Work run in the child: gets a function to report stage names, returns the result text.
using ChildWork = std::function<std::string(const std::function<void(const std::string&)>& report_stage)>;

enum class ChildEnding {
  completed,  // the work returned its result
  failed,     // the work threw; detail holds the message
  crashed,    // the child ended by a signal or without a result; detail says how
  timed_out,  // killed after the time limit
};

struct FinishedChild {
  std::size_t task = 0;  // the caller's number for the task
  ChildEnding ending = ChildEnding::completed;
  std::string result;      // what the work returned (completed)
  std::string last_stage;  // the last stage reported ("" if none)
  std::string detail;      // for failed, crashed and timed_out
  double seconds = 0.0;    // wall time from start to end
};

class ProcessPool {
 public:
  // slots: children at once (≥ 1); timeout_s: wall-time limit per task (0: none);
  // memory_limit_mb: address space of each child (RLIMIT_AS, MiB; 0: none). A child over it
  // sees its allocations fail (a failure or a crash, never the machine swapping).
  ProcessPool(int slots, double timeout_s, double memory_limit_mb = 0.0);
  ~ProcessPool();  // kills children still running
  ProcessPool(const ProcessPool&) = delete;
  ProcessPool& operator=(const ProcessPool&) = delete;

  int slots() const;
  std::size_t running() const;
  bool has_free_slot() const { return running() < static_cast<std::size_t>(slots()); }

  // Starts the work in a new child. Throws Error when no slot is free or fork fails.
  void start(std::size_t task, const ChildWork& work);

  // Waits up to max_wait_s for children to end (or to pass their time limit) and returns
  // those that did; returns early as soon as one ends.
  std::vector<FinishedChild> wait(double max_wait_s);

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

// Processors this process may run on (its CPU affinity), at least 1.
int available_processors();

}  // namespace overtone
