#pragma once
// The screening store: one SQLite database file (schema in docs/screening.md, version in
// PRAGMA user_version) in write-ahead-log mode. Each molecule's outcome is written in one
// transaction, so after a crash, a kill -9 or a power cut the file holds every molecule
// whose transaction committed and nothing of the one in flight. A run is named by the
// SHA-256 of its settings; a molecule by the SHA-256 of its content; a result by run,
// molecule and variant (the isotope rule, '' for the parent).
//
// One process writes a store at a time (the screen's coordinating process); readers
// (screen-report, the sqlite3 shell) may look at it meanwhile.
#include <SQLiteCpp/Database.h>

#include <map>
#include <memory>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "screen/inputs.hpp"
#include "screen/outcome.hpp"

namespace overtone {

inline constexpr int screen_schema_version = 1;

// Tables that screen-report can export as CSV, in schema order.
const std::vector<std::string>& store_table_names();

class ScreenStore {
 public:
  // Opens the store, creating it (with the schema) when the file does not exist and
  // create is true. Throws Error for a file that is not a store of this schema version,
  // cannot be opened, or (create false) does not exist.
  explicit ScreenStore(const std::string& path, bool create = true);
  ~ScreenStore();
  ScreenStore(const ScreenStore&) = delete;
  ScreenStore& operator=(const ScreenStore&) = delete;

  // The run with these settings: found by hash, else added. Returns its run_id.
  long long ensure_run(const nlohmann::json& settings, const std::string& settings_hash);

  // Status of every result of a run, by molecule content hash and variant.
  std::map<std::string, std::map<std::string, std::string>> result_statuses(long long run_id);

  // Writes the molecule (once per content hash) and every variant of the outcome in one
  // transaction; a variant that already has a result in this run is replaced.
  void write_outcome(long long run_id, const ScreenRecord& record, const MoleculeOutcome& outcome);

  SQLite::Database& database() { return *database_; }
  const std::string& path() const { return path_; }

 private:
  std::string path_;
  std::unique_ptr<SQLite::Database> database_;
  struct Statements;
  std::unique_ptr<Statements> statements_;
};

// A store opened for reading only (reports, exports). Throws Error like ScreenStore.
std::unique_ptr<SQLite::Database> open_store_for_reading(const std::string& path);

struct MergeCounts {
  std::size_t runs_added = 0;
  std::size_t molecules_added = 0;
  std::size_t results_added = 0;     // results the output did not have
  std::size_t results_replaced = 0;  // failed results in the output replaced by done ones
  std::size_t results_skipped = 0;   // already in the output (same run, molecule and variant)
};

// Adds the runs, molecules and results of the input store to the output store, matching
// runs by settings hash and molecules by content hash; one transaction per input. A result
// the output already has is kept, unless it failed and the input's is done. Throws Error
// for a file that is not a store or has another schema version, or when input and output
// are the same file.
MergeCounts merge_store(ScreenStore& output, const std::string& input_path);

}  // namespace overtone
