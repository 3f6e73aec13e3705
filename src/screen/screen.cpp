#include "screen/screen.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <cstdlib>

#include "core/error.hpp"
#include "molecule/openbabel_bridge.hpp"
#include "molecule/read_molecule.hpp"
#include "potential/make_potential.hpp"
#include "screen/hashing.hpp"
#include "screen/screen_detail.hpp"

namespace overtone {

namespace {

// How often a waiting engine reports progress without news (s).
constexpr double progress_interval_s = 1.0;
// More worker processes than this per processor only adds switching.
constexpr int max_jobs_per_processor = 8;

}  // namespace

void ScreenRequest::validate() const {
  if (inputs.empty())
    throw Error("a screen needs at least one INPUT (molecule file, smiles file, csv or directory)");
  if (store_path.empty()) throw Error("a screen needs --store FILE.sqlite");
  settings.validate();
  if (jobs < 0 || jobs > max_jobs_per_processor * available_processors())
    throw Error(fmt::format("--jobs must be 0 (one per processor) or 1 to {}, got {}",
                            max_jobs_per_processor * available_processors(), jobs));
  if (!(timeout_s >= 0.0) || !std::isfinite(timeout_s))
    throw Error(
        fmt::format("--timeout must be 0 (no limit) or a positive number of seconds, got {}", timeout_s));
  if (!(memory_limit_mb >= 0.0) || !std::isfinite(memory_limit_mb))
    throw Error(fmt::format("--memory-limit must be 0 (no limit) or a positive number of MiB, got {}",
                            memory_limit_mb));
  if (shard_count < 1 || shard_index < 1 || shard_index > shard_count)
    throw Error(fmt::format("--shard must be i/N with 1 <= i <= N, got {}/{}", shard_index, shard_count));
}

namespace detail {

std::vector<IsotopeRule> parse_rules(const std::vector<std::string>& texts) {
  std::vector<IsotopeRule> rules;
  for (const std::string& text : texts) {
    IsotopeRule rule = parse_isotope_rule(text);
    const bool repeated = std::any_of(rules.begin(), rules.end(),
                                      [&](const IsotopeRule& other) { return other.text == rule.text; });
    if (!repeated) rules.push_back(std::move(rule));
  }
  return rules;
}

PreparedScreen prepare_screen(const ScreenRequest& request, const std::vector<IsotopeRule>& rules) {
  PreparedScreen prepared;
  ScreenSummary& summary = prepared.summary;
  CollectedInputs inputs = collect_records(request.inputs, request.input_options);
  summary.listed = inputs.listed;
  summary.duplicates = inputs.duplicates;
  summary.warnings = inputs.warnings;
  const nlohmann::json settings = settings_json(request.settings);
  prepared.settings_hash = settings_hash(settings);
  prepared.store = std::make_unique<ScreenStore>(request.store_path);
  prepared.run_id = prepared.store->ensure_run(settings, prepared.settings_hash);
  summary.store_path = request.store_path;
  summary.run_id = prepared.run_id;
  summary.settings_hash = prepared.settings_hash;
  const auto statuses = prepared.store->result_statuses(prepared.run_id);
  std::vector<std::string> variants = {""};
  for (const IsotopeRule& rule : rules) variants.push_back(rule.text);
  for (ScreenRecord& record : inputs.records) {
    if (hash_prefix(record.content_hash) % static_cast<std::uint64_t>(request.shard_count) !=
        static_cast<std::uint64_t>(request.shard_index - 1))
      continue;
    ++summary.in_shard;
    const auto found = statuses.find(record.content_hash);
    ScreenTask task;
    for (const std::string& variant : variants) {
      bool have = false;
      if (found != statuses.end()) {
        const auto status = found->second.find(variant);
        have = status != found->second.end() && !(request.retry_failures && status->second == status_failed);
      }
      if (!have) task.variants.push_back(variant);
    }
    if (task.variants.empty()) {
      ++summary.already_done;
      continue;
    }
    task.record = std::move(record);
    prepared.tasks.push_back(std::move(task));
  }
  return prepared;
}

ChildWork molecule_work(const ScreenTask& task, const ScreenSettings& settings,
                        const std::vector<IsotopeRule>& rules) {
  return [&task, &settings, &rules](const std::function<void(const std::string&)>& report_stage) {
    return outcome_to_json(screen_molecule(task, settings, rules, report_stage)).dump();
  };
}

MoleculeOutcome outcome_of(const FinishedChild& child, const ScreenTask& task) {
  const std::string stage = child.last_stage.empty() ? screen_stage::read : child.last_stage;
  switch (child.ending) {
    case ChildEnding::completed:
      try {
        return outcome_from_json(nlohmann::json::parse(child.result));
      } catch (const std::exception& error) {
        return failed_outcome(task.variants, stage, std::string("internal error: ") + error.what());
      }
    case ChildEnding::failed:
      return failed_outcome(task.variants, stage, "internal error: " + child.detail);
    case ChildEnding::crashed:
      return failed_outcome(task.variants, stage, fmt::format("{} during the {} stage", child.detail, stage));
    case ChildEnding::timed_out:
      return failed_outcome(task.variants, stage, fmt::format("the {} stage {}", stage, child.detail));
  }
  return failed_outcome(task.variants, stage, "internal error: unknown ending of a worker process");
}

ProgressTracker::ProgressTracker(std::size_t total, int workers, const ProgressListener& listener)
    : start_(std::chrono::steady_clock::now()), listener_(listener) {
  progress_.total = total;
  progress_.workers = workers;
}

void ProgressTracker::report() {
  progress_.elapsed_s = std::chrono::duration<double>(std::chrono::steady_clock::now() - start_).count();
  progress_.rate_per_s =
      progress_.elapsed_s > 0.0 ? static_cast<double>(progress_.finished) / progress_.elapsed_s : 0.0;
  progress_.eta_s = progress_.rate_per_s > 0.0
                        ? static_cast<double>(progress_.total - progress_.finished) / progress_.rate_per_s
                        : 0.0;
  if (listener_) listener_(progress_);
}

void ProgressTracker::finished(const ScreenTask& task, const MoleculeOutcome& outcome,
                               ScreenSummary& summary) {
  ++summary.computed;
  bool failed = false;
  for (const VariantOutcome& variant : outcome.variants) {
    if (variant.status == status_failed) {
      failed = true;
      ++summary.failed_results;
    }
    if (variant.status == status_not_applicable) ++summary.not_applicable_results;
  }
  if (failed) {
    ++summary.failed_molecules;
    ++progress_.failed;
  }
  ++progress_.finished;
  progress_.last_id = task.record.id;
  report();
}

void ProgressTracker::tick() { report(); }

void ProgressTracker::done() {
  progress_.done = true;
  report();
}

void prepare_parent_for_workers(const ScreenSettings& settings) {
  run_openbabel_on_one_thread();
  try {
    ReadOptions options;
    options.input_is_smiles = true;
    const ReadResult methane = read_molecule("C", options);
    make_potential(settings.potential, methane.molecule);
  } catch (const Error&) {
    // A potential file made for another molecule: each child sets it up on its own.
  }
}

}  // namespace detail

namespace {

ScreenSummary run_with_processes(const ScreenRequest& request, const std::vector<IsotopeRule>& rules,
                                 const ProgressListener& on_progress) {
  const auto start = std::chrono::steady_clock::now();
  detail::PreparedScreen prepared = detail::prepare_screen(request, rules);
  ScreenSummary summary = std::move(prepared.summary);
  summary.engine = "processes";
  const int jobs = request.jobs > 0 ? request.jobs : available_processors();
  const std::vector<ScreenTask>& tasks = prepared.tasks;
  summary.workers = static_cast<int>(std::min<std::size_t>(static_cast<std::size_t>(jobs), tasks.size()));
  detail::ProgressTracker progress(tasks.size(), summary.workers, on_progress);
  if (!tasks.empty()) {
    detail::prepare_parent_for_workers(request.settings);
    ProcessPool pool(summary.workers, request.timeout_s, request.memory_limit_mb);
    std::size_t next = 0;
    const auto fill_slots = [&] {
      while (pool.has_free_slot() && next < tasks.size()) {
        pool.start(next, detail::molecule_work(tasks[next], request.settings, rules));
        ++next;
      }
    };
    while (next < tasks.size() || pool.running() > 0) {
      fill_slots();
      const std::vector<FinishedChild> finished = pool.wait(progress_interval_s);
      // The next molecules start before the finished ones are written: no worker waits
      // for the store.
      fill_slots();
      for (const FinishedChild& child : finished) {
        const ScreenTask& task = tasks.at(child.task);
        const MoleculeOutcome outcome = detail::outcome_of(child, task);
        prepared.store->write_outcome(prepared.run_id, task.record, outcome);
        progress.finished(task, outcome, summary);
      }
      if (finished.empty()) progress.tick();
    }
  }
  progress.done();
  summary.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  return summary;
}

}  // namespace

bool started_by_mpi_launcher() {
  for (const char* name : {"OMPI_COMM_WORLD_SIZE", "PMI_SIZE", "PMIX_SIZE", "MPI_LOCALNRANKS"}) {
    const char* value = std::getenv(name);
    if (value && std::atoi(value) > 1) return true;
  }
  return false;
}

ScreenSummary run_screen(const ScreenRequest& request, const ProgressListener& on_progress) {
  request.validate();
  const std::vector<IsotopeRule> rules = detail::parse_rules(request.isotope_rules);
  if (started_by_mpi_launcher()) {
    if (!built_with_mpi())
      throw Error(
          "this overtone was built without MPI, so its copies under an MPI launcher cannot share the work; "
          "run "
          "it without mpirun, or give each copy a --shard i/N of its own and store, then merge-stores");
    return detail::run_screen_mpi(request, rules, on_progress);
  }
  return run_with_processes(request, rules, on_progress);
}

}  // namespace overtone
