#include "screen/store.hpp"

#include <SQLiteCpp/Statement.h>
#include <SQLiteCpp/Transaction.h>
#include <fmt/format.h>

#include <chrono>
#include <ctime>
#include <filesystem>
#include <optional>

#include "core/error.hpp"

namespace overtone {

namespace {

namespace fs = std::filesystem;

// A busy database (a reader holding a lock while the write-ahead log is checkpointed)
// is waited for this long before an error (ms); readers never block a WAL writer otherwise.
constexpr int busy_timeout_ms = 60000;

const char* const schema_statements[] = {
    R"(CREATE TABLE runs (
      run_id INTEGER PRIMARY KEY,
      settings_hash TEXT NOT NULL UNIQUE,
      settings TEXT NOT NULL,
      potential TEXT NOT NULL,
      stages TEXT NOT NULL,
      created TEXT NOT NULL))",
    R"(CREATE TABLE molecules (
      molecule_id INTEGER PRIMARY KEY,
      content_hash TEXT NOT NULL UNIQUE,
      name TEXT NOT NULL,
      origin TEXT NOT NULL,
      record_format TEXT NOT NULL,
      record TEXT NOT NULL,
      formula TEXT,
      atom_count INTEGER))",
    R"(CREATE TABLE results (
      result_id INTEGER PRIMARY KEY,
      run_id INTEGER NOT NULL REFERENCES runs(run_id),
      molecule_id INTEGER NOT NULL REFERENCES molecules(molecule_id),
      variant TEXT NOT NULL,
      status TEXT NOT NULL CHECK (status IN ('done', 'failed', 'not_applicable')),
      failed_stage TEXT,
      message TEXT,
      labelled_atoms TEXT,
      point_group TEXT,
      optimization_converged INTEGER,
      rms_gradient REAL,
      energy_kcal_mol REAL,
      imaginary_modes INTEGER,
      lowest_cm1 REAL,
      x_matrix_cm1 TEXT,
      warnings TEXT,
      seconds REAL,
      finished TEXT NOT NULL,
      UNIQUE (run_id, molecule_id, variant)))",
    R"(CREATE TABLE modes (
      result_id INTEGER NOT NULL REFERENCES results(result_id) ON DELETE CASCADE,
      mode INTEGER NOT NULL,
      fundamental INTEGER NOT NULL,
      species TEXT,
      harmonic_cm1 REAL NOT NULL,
      ir_active INTEGER,
      raman_active INTEGER,
      reduced_mass_da REAL,
      stiffness_aj_per_angstrom2 REAL,
      vpt2_cm1 REAL,
      corrected_cm1 REAL,
      x_diagonal_cm1 REAL,
      parent_mode INTEGER,
      shift_cm1 REAL,
      labelled_share REAL,
      PRIMARY KEY (result_id, mode)) WITHOUT ROWID)",
    R"(CREATE TABLE resonances (
      result_id INTEGER NOT NULL REFERENCES results(result_id) ON DELETE CASCADE,
      resonance INTEGER NOT NULL,
      kind TEXT NOT NULL,
      label TEXT NOT NULL,
      first_fundamental INTEGER NOT NULL,
      second_fundamental INTEGER NOT NULL,
      partner_fundamental INTEGER NOT NULL,
      lower_label TEXT NOT NULL,
      upper_label TEXT NOT NULL,
      partner_species TEXT,
      lower_harmonic_cm1 REAL NOT NULL,
      upper_harmonic_cm1 REAL NOT NULL,
      band_cm1 REAL,
      gap_cm1 REAL NOT NULL,
      coupling_cm1 REAL NOT NULL,
      criterion_value REAL NOT NULL,
      symmetry_allowed INTEGER NOT NULL,
      flagged INTEGER NOT NULL,
      PRIMARY KEY (result_id, resonance)) WITHOUT ROWID)",
    R"(CREATE TABLE levels (
      result_id INTEGER NOT NULL REFERENCES results(result_id) ON DELETE CASCADE,
      level INTEGER NOT NULL,
      kind TEXT NOT NULL,
      label TEXT NOT NULL,
      species TEXT,
      sublevel INTEGER NOT NULL,
      degeneracy INTEGER NOT NULL,
      ir_active INTEGER,
      raman_active INTEGER,
      harmonic_cm1 REAL NOT NULL,
      vpt2_cm1 REAL NOT NULL,
      corrected_cm1 REAL,
      polyad INTEGER,
      PRIMARY KEY (result_id, level)) WITHOUT ROWID)",
    R"(CREATE TABLE families (
      result_id INTEGER NOT NULL REFERENCES results(result_id) ON DELETE CASCADE,
      family INTEGER NOT NULL,
      fundamental INTEGER NOT NULL,
      species TEXT,
      description TEXT,
      copies INTEGER NOT NULL,
      standing INTEGER NOT NULL,
      continued INTEGER NOT NULL,
      status TEXT,
      message TEXT,
      points INTEGER NOT NULL,
      energy_max_cm1 REAL,
      first_frequency_cm1 REAL,
      last_frequency_cm1 REAL,
      last_energy_cm1 REAL,
      events INTEGER NOT NULL,
      allowed_threats INTEGER NOT NULL,
      PRIMARY KEY (result_id, family)) WITHOUT ROWID)",   R"(CREATE INDEX results_by_molecule ON results (molecule_id))",
    R"(CREATE VIEW failures AS
      SELECT results.run_id, molecules.name, molecules.origin, results.variant,
             results.failed_stage AS stage, results.message, molecules.content_hash
      FROM results JOIN molecules USING (molecule_id)
      WHERE results.status = 'failed')",
};

// Columns of the per-result tables after result_id, in table order (shared by the
// writer and the merge).
const char* const mode_columns =
    "mode, fundamental, species, harmonic_cm1, ir_active, raman_active, reduced_mass_da, "
    "stiffness_aj_per_angstrom2, vpt2_cm1, corrected_cm1, x_diagonal_cm1, parent_mode, shift_cm1, "
    "labelled_share";
const char* const resonance_columns =
    "resonance, kind, label, first_fundamental, second_fundamental, partner_fundamental, lower_label, "
    "upper_label, partner_species, lower_harmonic_cm1, upper_harmonic_cm1, band_cm1, gap_cm1, coupling_cm1, "
    "criterion_value, symmetry_allowed, flagged";
const char* const level_columns =
    "level, kind, label, species, sublevel, degeneracy, ir_active, raman_active, harmonic_cm1, vpt2_cm1, "
    "corrected_cm1, polyad";
const char* const family_columns =
    "family, fundamental, species, description, copies, standing, continued, status, message, points, "
    "energy_max_cm1, first_frequency_cm1, last_frequency_cm1, last_energy_cm1, events, allowed_threats";
const char* const result_columns =
    "status, failed_stage, message, labelled_atoms, point_group, optimization_converged, rms_gradient, "
    "energy_kcal_mol, imaginary_modes, lowest_cm1, x_matrix_cm1, warnings, seconds, finished";

std::string placeholders(const char* columns) {
  std::string text = "?";
  for (const char* c = columns; *c; ++c)
    if (*c == ',') text += ", ?";
  return text;
}

std::string utc_now() {
  const std::time_t now = std::chrono::system_clock::to_time_t(std::chrono::system_clock::now());
  std::tm parts{};
  gmtime_r(&now, &parts);
  char text[32];
  std::strftime(text, sizeof text, "%Y-%m-%dT%H:%M:%SZ", &parts);
  return text;
}

// Binds values one after another, nulls for empty optionals.
class Binder {
 public:
  explicit Binder(SQLite::Statement& statement) : statement_(statement) { statement_.reset(); }
  Binder& operator()(long long value) {
    statement_.bind(++index_, static_cast<int64_t>(value));
    return *this;
  }
  Binder& operator()(int value) {
    statement_.bind(++index_, value);
    return *this;
  }
  Binder& operator()(bool value) {
    statement_.bind(++index_, value ? 1 : 0);
    return *this;
  }
  Binder& operator()(double value) {
    statement_.bind(++index_, value);
    return *this;
  }
  Binder& operator()(const std::string& value) {
    statement_.bind(++index_, value);
    return *this;
  }
  Binder& text_or_null(const std::string& value) {
    if (value.empty())
      statement_.bind(++index_);
    else
      statement_.bind(++index_, value);
    return *this;
  }
  template <typename T>
  Binder& operator()(const std::optional<T>& value) {
    if (value) return (*this)(*value);
    statement_.bind(++index_);
    return *this;
  }
  void run() {
    statement_.exec();
    statement_.reset();
  }

 private:
  SQLite::Statement& statement_;
  int index_ = 0;
};

// A statement's values: values(statement)(a)(b).run(); (a function, so that the call
// cannot read as a declaration).
Binder values(SQLite::Statement& statement) { return Binder(statement); }

void check_schema(SQLite::Database& database, const std::string& path) {
  const int version = database.execAndGet("PRAGMA user_version").getInt();
  if (version != screen_schema_version || !database.tableExists("results"))
    throw Error(fmt::format("'{}' is not a screening store of schema version {} (found version {})", path,
                            screen_schema_version, version));
}

}  // namespace

const std::vector<std::string>& store_table_names() {
  static const std::vector<std::string> names = {"runs",       "molecules", "results",  "modes",
                                                 "resonances", "levels",    "families", "failures"};
  return names;
}

struct ScreenStore::Statements {
  explicit Statements(SQLite::Database& db)
      : insert_molecule(db,
                        "INSERT INTO molecules (content_hash, name, origin, record_format, record, formula, "
                        "atom_count) VALUES (?, ?, ?, ?, ?, ?, ?) ON CONFLICT (content_hash) DO UPDATE SET "
                        "formula = COALESCE(molecules.formula, excluded.formula), atom_count = "
                        "COALESCE(molecules.atom_count, excluded.atom_count)"),
        molecule_id(db, "SELECT molecule_id FROM molecules WHERE content_hash = ?"),
        delete_result(db, "DELETE FROM results WHERE run_id = ? AND molecule_id = ? AND variant = ?"),
        insert_result(
            db, fmt::format("INSERT INTO results (run_id, molecule_id, variant, {}) VALUES (?, ?, ?, {})",
                            result_columns, placeholders(result_columns))),
        insert_mode(db, fmt::format("INSERT INTO modes (result_id, {}) VALUES (?, {})", mode_columns,
                                    placeholders(mode_columns))),
        insert_resonance(db, fmt::format("INSERT INTO resonances (result_id, {}) VALUES (?, {})",
                                         resonance_columns, placeholders(resonance_columns))),
        insert_level(db, fmt::format("INSERT INTO levels (result_id, {}) VALUES (?, {})", level_columns,
                                     placeholders(level_columns))),
        insert_family(db, fmt::format("INSERT INTO families (result_id, {}) VALUES (?, {})", family_columns,
                                      placeholders(family_columns))) {}
  SQLite::Statement insert_molecule;
  SQLite::Statement molecule_id;
  SQLite::Statement delete_result;
  SQLite::Statement insert_result;
  SQLite::Statement insert_mode;
  SQLite::Statement insert_resonance;
  SQLite::Statement insert_level;
  SQLite::Statement insert_family;
};

ScreenStore::ScreenStore(const std::string& path, bool create) : path_(path) {
  std::error_code ec;
  const bool exists = fs::exists(path, ec);
  if (!exists && !create) throw Error(fmt::format("store '{}' does not exist", path));
  if (exists && fs::is_directory(path, ec))
    throw Error(fmt::format("store '{}' is a directory, expected an sqlite file", path));
  try {
    database_ = std::make_unique<SQLite::Database>(
        path, SQLite::OPEN_READWRITE | (create ? SQLite::OPEN_CREATE : 0), busy_timeout_ms);
    SQLite::Database& db = *database_;
    db.exec("PRAGMA foreign_keys = ON");
    const bool empty = db.execAndGet("SELECT count(*) FROM sqlite_master").getInt() == 0;
    if (empty) {
      // The file is new (or an empty database): lay out the schema in one transaction.
      SQLite::Transaction transaction(db);
      for (const char* statement : schema_statements) db.exec(statement);
      db.exec(fmt::format("PRAGMA user_version = {}", screen_schema_version));
      transaction.commit();
    }
    check_schema(db, path);
    // Write-ahead log: a commit is one append, readers do not block the writer, and a kill
    // at any point leaves the last committed state. NORMAL syncs at checkpoints, not at
    // every commit: a power cut may take back the last few molecules (a rerun computes
    // them again) but never leaves the file inconsistent or a molecule half-written
    // (SQLite documentation, "Write-Ahead Logging" and "PRAGMA synchronous"); a sync per
    // molecule would hold up the workers waiting for their next molecule.
    db.exec("PRAGMA journal_mode = WAL");
    db.exec("PRAGMA synchronous = NORMAL");
    statements_ = std::make_unique<Statements>(db);
  } catch (const SQLite::Exception& error) {
    throw Error(fmt::format("store '{}' cannot be opened: {}", path, error.what()));
  }
}

ScreenStore::~ScreenStore() = default;

long long ScreenStore::ensure_run(const nlohmann::json& settings, const std::string& settings_hash) {
  SQLite::Database& db = *database_;
  SQLite::Statement find(db, "SELECT run_id FROM runs WHERE settings_hash = ?");
  find.bind(1, settings_hash);
  if (find.executeStep()) return find.getColumn(0).getInt64();
  SQLite::Statement insert(
      db, "INSERT INTO runs (settings_hash, settings, potential, stages, created) VALUES (?, ?, ?, ?, ?)");
  values(insert)(settings_hash)(settings.dump())(settings.value("potential", std::string()))(
      settings.value("stages", std::string()))(utc_now())
      .run();
  return db.getLastInsertRowid();
}

std::map<std::string, std::map<std::string, std::string>> ScreenStore::result_statuses(long long run_id) {
  std::map<std::string, std::map<std::string, std::string>> statuses;
  SQLite::Statement query(*database_,
                          "SELECT molecules.content_hash, results.variant, results.status FROM results JOIN "
                          "molecules USING (molecule_id) WHERE results.run_id = ?");
  query.bind(1, static_cast<int64_t>(run_id));
  while (query.executeStep())
    statuses[query.getColumn(0).getString()][query.getColumn(1).getString()] = query.getColumn(2).getString();
  return statuses;
}

void ScreenStore::write_outcome(long long run_id, const ScreenRecord& record,
                                const MoleculeOutcome& outcome) {
  SQLite::Database& db = *database_;
  Statements& s = *statements_;
  try {
    SQLite::Transaction transaction(db);
    values(s.insert_molecule)(record.content_hash)(record.id)(record.origin)(record.format)(record.text)
        .text_or_null(outcome.formula)(outcome.atom_count > 0 ? std::optional<int>(outcome.atom_count)
                                                              : std::nullopt)
        .run();
    s.molecule_id.reset();
    s.molecule_id.bind(1, record.content_hash);
    if (!s.molecule_id.executeStep()) throw Error("a molecule just written to the store is missing");
    const long long molecule_id = s.molecule_id.getColumn(0).getInt64();
    s.molecule_id.reset();
    const std::string finished = utc_now();
    for (const VariantOutcome& v : outcome.variants) {
      values(s.delete_result)(run_id)(molecule_id)(v.variant).run();
      const nlohmann::json warnings = v.warnings;
      values(s.insert_result)(run_id)(molecule_id)(v.variant)(v.status)
          .text_or_null(v.failed_stage)
          .text_or_null(v.message)
          .text_or_null(v.labelled_atoms)
          .text_or_null(v.point_group)(v.optimization_converged)(v.rms_gradient)(v.energy_kcal_mol)(
              v.imaginary_modes)(v.lowest_cm1)
          .text_or_null(v.x_matrix_cm1.empty() ? std::string() : nlohmann::json(v.x_matrix_cm1).dump())
          .text_or_null(v.warnings.empty() ? std::string() : warnings.dump())(v.seconds)(finished)
          .run();
      const long long result_id = db.getLastInsertRowid();
      for (const ScreenModeRow& m : v.modes)
        values(s.insert_mode)(result_id)(m.mode)(m.fundamental)
            .text_or_null(m.species)(m.harmonic_cm1)(m.ir_active)(m.raman_active)(m.reduced_mass_da)(
                m.stiffness_aj_per_angstrom2)(m.vpt2_cm1)(m.corrected_cm1)(m.x_diagonal_cm1)(m.parent_mode)(
                m.shift_cm1)(m.labelled_share)
            .run();
      for (const ScreenResonanceRow& r : v.resonances)
        values(s.insert_resonance)(result_id)(r.resonance)(r.kind)(r.label)(r.first)(r.second)(r.partner)(
            r.lower_label)(r.upper_label)
            .text_or_null(r.partner_species)(r.lower_harmonic_cm1)(r.upper_harmonic_cm1)(r.band_cm1)(
                r.gap_cm1)(r.coupling_cm1)(r.criterion_value)(r.symmetry_allowed)(r.flagged)
            .run();
      for (const ScreenLevelRow& l : v.levels)
        values(s.insert_level)(result_id)(l.level)(l.kind)(l.label)
            .text_or_null(l.species)(l.sublevel)(l.degeneracy)(l.ir_active)(l.raman_active)(l.harmonic_cm1)(
                l.vpt2_cm1)(l.corrected_cm1)(l.polyad)
            .run();
      for (const ScreenFamilyRow& f : v.families)
        values(s.insert_family)(result_id)(f.family)(f.fundamental)
            .text_or_null(f.species)
            .text_or_null(f.description)(f.copies)(f.standing)(f.continued)
            .text_or_null(f.status)
            .text_or_null(f.message)(f.points)(f.energy_max_cm1)(f.first_frequency_cm1)(f.last_frequency_cm1)(
                f.last_energy_cm1)(f.events)(f.allowed_threats)
            .run();
    }
    transaction.commit();
  } catch (const SQLite::Exception& error) {
    throw Error(
        fmt::format("writing molecule '{}' to store '{}' failed: {}", record.id, path_, error.what()));
  }
}

std::unique_ptr<SQLite::Database> open_store_for_reading(const std::string& path) {
  std::error_code ec;
  if (!fs::exists(path, ec)) throw Error(fmt::format("store '{}' does not exist", path));
  if (fs::is_directory(path, ec))
    throw Error(fmt::format("store '{}' is a directory, expected an sqlite file", path));
  try {
    auto database = std::make_unique<SQLite::Database>(path, SQLite::OPEN_READONLY, busy_timeout_ms);
    check_schema(*database, path);
    return database;
  } catch (const SQLite::Exception& error) {
    throw Error(fmt::format("store '{}' cannot be read: {}", path, error.what()));
  }
}

MergeCounts merge_store(ScreenStore& output, const std::string& input_path) {
  std::error_code ec;
  if (!fs::exists(input_path, ec)) throw Error(fmt::format("store '{}' does not exist", input_path));
  if (fs::equivalent(input_path, output.path(), ec))
    throw Error(fmt::format("store '{}' is the output itself; name another store to merge", input_path));
  {
    // Checked on a connection of its own, so that a file that is no store is refused
    // before anything is attached.
    SQLite::Database input(input_path, SQLite::OPEN_READONLY);
    check_schema(input, input_path);
  }
  SQLite::Database& db = output.database();
  MergeCounts counts;
  try {
    SQLite::Statement attach(db, "ATTACH DATABASE ? AS incoming");
    attach.bind(1, input_path);
    attach.exec();
    struct Detach {
      SQLite::Database& db;
      ~Detach() {
        try {
          db.exec("DETACH DATABASE incoming");
        } catch (...) {
        }
      }
    } detach{db};
    SQLite::Transaction transaction(db);
    counts.runs_added = static_cast<std::size_t>(db.exec(
        "INSERT OR IGNORE INTO runs (settings_hash, settings, potential, stages, created) "
        "SELECT settings_hash, settings, potential, stages, created FROM incoming.runs ORDER BY run_id"));
    counts.molecules_added = static_cast<std::size_t>(db.exec(
        "INSERT OR IGNORE INTO molecules (content_hash, name, origin, record_format, record, formula, "
        "atom_count) SELECT content_hash, name, origin, record_format, record, formula, atom_count "
        "FROM incoming.molecules ORDER BY molecule_id"));
    SQLite::Statement pending(
        db,
        "SELECT ir.result_id, mr.run_id, mm.molecule_id, ir.variant, ir.status, "
        "(SELECT r.status FROM main.results r WHERE r.run_id = mr.run_id AND r.molecule_id = mm.molecule_id "
        "AND r.variant = ir.variant) "
        "FROM incoming.results ir JOIN incoming.runs irun ON irun.run_id = ir.run_id "
        "JOIN incoming.molecules im ON im.molecule_id = ir.molecule_id "
        "JOIN main.runs mr ON mr.settings_hash = irun.settings_hash "
        "JOIN main.molecules mm ON mm.content_hash = im.content_hash ORDER BY ir.result_id");
    SQLite::Statement remove(db,
                             "DELETE FROM main.results WHERE run_id = ? AND molecule_id = ? AND variant = ?");
    SQLite::Statement copy_result(
        db,
        fmt::format("INSERT INTO main.results (run_id, molecule_id, variant, {0}) SELECT ?, ?, variant, {0} "
                    "FROM incoming.results WHERE result_id = ?",
                    result_columns));
    std::vector<std::unique_ptr<SQLite::Statement>> copy_rows;
    for (const auto& [table, columns] :
         {std::pair{"modes", mode_columns}, std::pair{"resonances", resonance_columns},
          std::pair{"levels", level_columns}, std::pair{"families", family_columns}})
      copy_rows.push_back(std::make_unique<SQLite::Statement>(
          db, fmt::format(
                  "INSERT INTO main.{0} (result_id, {1}) SELECT ?, {1} FROM incoming.{0} WHERE result_id = ?",
                  table, columns)));
    struct Pending {
      long long incoming_id, run_id, molecule_id;
      std::string variant, status;
      std::optional<std::string> existing;
    };
    std::vector<Pending> rows;
    while (pending.executeStep()) {
      Pending row{pending.getColumn(0).getInt64(),  pending.getColumn(1).getInt64(),
                  pending.getColumn(2).getInt64(),  pending.getColumn(3).getString(),
                  pending.getColumn(4).getString(), std::nullopt};
      if (!pending.getColumn(5).isNull()) row.existing = pending.getColumn(5).getString();
      rows.push_back(std::move(row));
    }
    for (const Pending& row : rows) {
      if (row.existing) {
        if (!(*row.existing == status_failed && row.status == status_done)) {
          ++counts.results_skipped;
          continue;
        }
        values(remove)(row.run_id)(row.molecule_id)(row.variant).run();
        ++counts.results_replaced;
      } else {
        ++counts.results_added;
      }
      values(copy_result)(row.run_id)(row.molecule_id)(row.incoming_id).run();
      const long long result_id = db.getLastInsertRowid();
      for (auto& copy : copy_rows) values (*copy)(result_id)(row.incoming_id).run();
    }
    transaction.commit();
  } catch (const SQLite::Exception& error) {
    throw Error(
        fmt::format("merging store '{}' into '{}' failed: {}", input_path, output.path(), error.what()));
  }
  return counts;
}

}  // namespace overtone
