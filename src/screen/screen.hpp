#pragma once
// `overtone screen` as one library call: list the input records, find or add the run of
// these settings in the store, skip what the store already holds, and compute the rest
// in worker processes (or, started by mpirun, on the other MPI ranks), writing each
// molecule to the store in one transaction as soon as it is finished.
#include <cstddef>
#include <functional>
#include <string>
#include <vector>

#include "screen/inputs.hpp"
#include "screen/settings.hpp"

namespace overtone {

struct ScreenRequest {
  std::vector<std::string> inputs;
  InputOptions input_options;
  std::string store_path;
  ScreenSettings settings;
  std::vector<std::string> isotope_rules;  // rule texts (isotope_rules.hpp), one variant each
  int jobs = 0;                            // worker processes at once; 0: one per available processor
  double timeout_s = 0.0;                  // wall-time limit per molecule (all its variants); 0: none
  double memory_limit_mb = 0.0;            // address space of each worker process (MiB); 0: none
  // Scheduler job arrays: this process takes the records whose content hash, taken modulo
  // shard_count, is shard_index − 1 (shard_index 1 … shard_count).
  int shard_index = 1;
  int shard_count = 1;
  bool retry_failures = false;  // compute failed results of this run again

  // Throws Error naming the first invalid field (and the rules that do not parse).
  void validate() const;
};

struct ScreenProgress {
  std::size_t total = 0;     // molecules to compute in this invocation
  std::size_t finished = 0;  // of those, written to the store
  std::size_t failed = 0;    // of those, with at least one failed variant
  double elapsed_s = 0.0;
  double rate_per_s = 0.0;  // finished molecules per second so far
  double eta_s = 0.0;       // remaining / rate; 0 when unknown
  int workers = 0;
  std::string last_id;  // the molecule finished last
  bool done = false;    // the final report
};
using ProgressListener = std::function<void(const ScreenProgress&)>;

struct ScreenSummary {
  bool coordinator = true;  // false on MPI ranks other than 0 (they only compute)
  std::string engine;       // "processes" or "mpi"
  int workers = 0;
  std::string store_path;
  long long run_id = 0;
  std::string settings_hash;
  std::size_t listed = 0;        // records in the inputs
  std::size_t duplicates = 0;    // of those, same content as an earlier one
  std::size_t in_shard = 0;      // unique molecules this shard takes
  std::size_t already_done = 0;  // of those, complete in the store before this invocation
  std::size_t computed = 0;      // molecules computed and written now
  std::size_t failed_molecules = 0;
  std::size_t failed_results = 0;          // variants recorded as failed now
  std::size_t not_applicable_results = 0;  // isotope variants whose rule matched nothing
  double seconds = 0.0;
  std::vector<std::string> warnings;
};

// Throws Error for bad input found before any work starts (a missing input, a bad CSV
// header, an invalid rule, a store of another schema); a molecule that fails is recorded
// in the store, not thrown.
ScreenSummary run_screen(const ScreenRequest& request, const ProgressListener& on_progress = {});

// Whether this process was started by an MPI launcher (mpirun/mpiexec) with other ranks.
bool started_by_mpi_launcher();
// Whether the program was built with MPI.
bool built_with_mpi();

}  // namespace overtone
