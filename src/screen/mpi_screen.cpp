// The MPI engine of run_screen (built when MPI is found). Rank 0 lists the records, keeps
// the store and hands out one molecule at a time to whichever rank asks; the other ranks
// compute each molecule in a child process of their own (the same isolation and time
// limit as on one machine) and send the outcome back. Rank 0 alone writes the store, one
// transaction per molecule, so a rank that dies takes with it only the molecule it had:
// the launcher then ends the job, and running the same command again computes what is
// missing.
#include <fmt/format.h>

#include "core/error.hpp"
#include "screen/screen_detail.hpp"

#ifdef OVERTONE_WITH_MPI
#include <mpi.h>
#include <time.h>
#endif

namespace overtone {

bool built_with_mpi() {
#ifdef OVERTONE_WITH_MPI
  return true;
#else
  return false;
#endif
}

namespace detail {

#ifndef OVERTONE_WITH_MPI

ScreenSummary run_screen_mpi(const ScreenRequest&, const std::vector<IsotopeRule>&, const ProgressListener&) {
  throw Error("this overtone was built without MPI");
}

#else

namespace {

constexpr int coordinator_rank = 0;
constexpr int tag_ready = 1;    // worker → coordinator: give me a molecule
constexpr int tag_task = 2;     // coordinator → worker: a molecule (JSON)
constexpr int tag_stop = 3;     // coordinator → worker: nothing left
constexpr int tag_outcome = 4;  // worker → coordinator: an outcome (JSON), and ready for more
// Waiting ranks look for messages this often instead of blocking in MPI_Recv, which in
// Open MPI spins on a processor the computing ranks need (ms).
constexpr long poll_interval_ns = 2'000'000;
constexpr double progress_interval_s = 1.0;

void sleep_briefly() {
  timespec pause{0, poll_interval_ns};
  nanosleep(&pause, nullptr);
}

// Waits for a message (from source, any tag) without spinning; false after max_wait_s.
bool wait_message(int source, MPI_Status& status, double max_wait_s) {
  const double start = MPI_Wtime();
  for (;;) {
    int flag = 0;
    MPI_Iprobe(source, MPI_ANY_TAG, MPI_COMM_WORLD, &flag, &status);
    if (flag) return true;
    if (max_wait_s >= 0.0 && MPI_Wtime() - start > max_wait_s) return false;
    sleep_briefly();
  }
}

std::string receive_text(const MPI_Status& status) {
  int count = 0;
  MPI_Get_count(&status, MPI_CHAR, &count);
  std::string text(static_cast<std::size_t>(count), '\0');
  MPI_Recv(text.data(), count, MPI_CHAR, status.MPI_SOURCE, status.MPI_TAG, MPI_COMM_WORLD,
           MPI_STATUS_IGNORE);
  return text;
}

void send_text(const std::string& text, int destination, int tag) {
  MPI_Send(text.data(), static_cast<int>(text.size()), MPI_CHAR, destination, tag, MPI_COMM_WORLD);
}

nlohmann::json task_to_json(std::size_t index, const ScreenTask& task) {
  const ScreenRecord& r = task.record;
  return {{"task", index},
          {"id", r.id},
          {"origin", r.origin},
          {"format", r.format},
          {"text", r.text},
          {"content_hash", r.content_hash},
          {"variants", task.variants}};
}

ScreenTask task_from_json(const nlohmann::json& document) {
  ScreenTask task;
  task.record.id = document.at("id").get<std::string>();
  task.record.origin = document.at("origin").get<std::string>();
  task.record.format = document.at("format").get<std::string>();
  task.record.text = document.at("text").get<std::string>();
  task.record.content_hash = document.at("content_hash").get<std::string>();
  task.variants = document.at("variants").get<std::vector<std::string> >();
  return task;
}

// Ends MPI however the engine is left.
struct MpiSession {
  MpiSession() {
    int initialized = 0;
    MPI_Initialized(&initialized);
    if (!initialized) MPI_Init(nullptr, nullptr);
  }
  ~MpiSession() {
    int finalized = 0;
    MPI_Finalized(&finalized);
    if (!finalized) MPI_Finalize();
  }
  int rank() const {
    int value = 0;
    MPI_Comm_rank(MPI_COMM_WORLD, &value);
    return value;
  }
  int size() const {
    int value = 0;
    MPI_Comm_size(MPI_COMM_WORLD, &value);
    return value;
  }
};

void run_worker(const ScreenRequest& request, const std::vector<IsotopeRule>& rules) {
  prepare_parent_for_workers(request.settings);
  ProcessPool pool(1, request.timeout_s, request.memory_limit_mb);
  send_text("", coordinator_rank, tag_ready);
  for (;;) {
    MPI_Status status;
    wait_message(coordinator_rank, status, -1.0);
    const std::string text = receive_text(status);
    if (status.MPI_TAG == tag_stop) return;
    const nlohmann::json document = nlohmann::json::parse(text);
    const std::size_t index = document.at("task").get<std::size_t>();
    const ScreenTask task = task_from_json(document);
    pool.start(index, molecule_work(task, request.settings, rules));
    std::vector<FinishedChild> finished;
    while (finished.empty()) finished = pool.wait(progress_interval_s);
    const MoleculeOutcome outcome = outcome_of(finished.front(), task);
    send_text(nlohmann::json{{"task", index}, {"outcome", outcome_to_json(outcome)}}.dump(), coordinator_rank,
              tag_outcome);
  }
}

// Answers every worker's next request with stop (after a failure before any work).
void stop_workers(int workers) {
  for (int stopped = 0; stopped < workers; ++stopped) {
    MPI_Status status;
    wait_message(MPI_ANY_SOURCE, status, -1.0);
    receive_text(status);
    send_text("", status.MPI_SOURCE, tag_stop);
  }
}

ScreenSummary run_coordinator(const ScreenRequest& request, const std::vector<IsotopeRule>& rules,
                              const ProgressListener& on_progress, int workers) {
  const double start = MPI_Wtime();
  PreparedScreen prepared;
  try {
    prepared = prepare_screen(request, rules);
  } catch (...) {
    stop_workers(workers);
    throw;
  }
  ScreenSummary summary = std::move(prepared.summary);
  summary.engine = "mpi";
  summary.workers = workers;
  const std::vector<ScreenTask>& tasks = prepared.tasks;
  ProgressTracker progress(tasks.size(), workers, on_progress);
  std::size_t next = 0;
  int stopped = 0;
  while (stopped < workers) {
    MPI_Status status;
    if (!wait_message(MPI_ANY_SOURCE, status, progress_interval_s)) {
      progress.tick();
      continue;
    }
    const std::string text = receive_text(status);
    if (status.MPI_TAG == tag_outcome) {
      const nlohmann::json document = nlohmann::json::parse(text);
      const ScreenTask& task = tasks.at(document.at("task").get<std::size_t>());
      const MoleculeOutcome outcome = outcome_from_json(document.at("outcome"));
      prepared.store->write_outcome(prepared.run_id, task.record, outcome);
      progress.finished(task, outcome, summary);
    }
    if (next < tasks.size()) {
      send_text(task_to_json(next, tasks[next]).dump(), status.MPI_SOURCE, tag_task);
      ++next;
    } else {
      send_text("", status.MPI_SOURCE, tag_stop);
      ++stopped;
    }
  }
  progress.done();
  summary.seconds = MPI_Wtime() - start;
  return summary;
}

}  // namespace

ScreenSummary run_screen_mpi(const ScreenRequest& request, const std::vector<IsotopeRule>& rules,
                             const ProgressListener& on_progress) {
  MpiSession session;
  const int workers = session.size() - 1;
  if (session.rank() != coordinator_rank) {
    run_worker(request, rules);
    ScreenSummary summary;
    summary.coordinator = false;
    summary.engine = "mpi";
    return summary;
  }
  if (workers < 1) throw Error("an mpi screen needs at least two ranks (one keeps the store)");
  return run_coordinator(request, rules, on_progress, workers);
}

#endif

}  // namespace detail

}  // namespace overtone
