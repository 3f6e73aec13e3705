#pragma once
// Pieces shared by the two engines of run_screen (worker processes, MPI ranks). Not a
// public interface.
#include <chrono>
#include <memory>
#include <string>
#include <vector>

#include "screen/isotope_rules.hpp"
#include "screen/process_pool.hpp"
#include "screen/screen.hpp"
#include "screen/screen_molecule.hpp"
#include "screen/store.hpp"

namespace overtone::detail {

struct PreparedScreen {
  std::unique_ptr<ScreenStore> store;
  long long run_id = 0;
  std::string settings_hash;
  std::vector<ScreenTask> tasks;  // molecules with variants still to compute
  ScreenSummary summary;          // counts of the listing filled in
};

// Lists the inputs, opens the store, finds or adds the run and leaves out what is done.
PreparedScreen prepare_screen(const ScreenRequest& request, const std::vector<IsotopeRule>& rules);

std::vector<IsotopeRule> parse_rules(const std::vector<std::string>& texts);

// The work of one molecule in a child process: its outcome as JSON text.
ChildWork molecule_work(const ScreenTask& task, const ScreenSettings& settings,
                        const std::vector<IsotopeRule>& rules);

// The outcome of a child: what it sent, or every variant failed at the stage it was in.
MoleculeOutcome outcome_of(const FinishedChild& child, const ScreenTask& task);

// Counts an outcome into the summary and the progress.
class ProgressTracker {
 public:
  ProgressTracker(std::size_t total, int workers, const ProgressListener& listener);
  void finished(const ScreenTask& task, const MoleculeOutcome& outcome, ScreenSummary& summary);
  void tick();  // a report without news (time passes)
  void done();

 private:
  ScreenProgress progress_;
  std::chrono::steady_clock::time_point start_;
  const ProgressListener& listener_;
  void report();
};

// Warms up what every child would otherwise load again (Open Babel's formats and force
// field parameters) and keeps library threads at one per process.
void prepare_parent_for_workers(const ScreenSettings& settings);

ScreenSummary run_screen_mpi(const ScreenRequest& request, const std::vector<IsotopeRule>& rules,
                             const ProgressListener& on_progress);

}  // namespace overtone::detail
