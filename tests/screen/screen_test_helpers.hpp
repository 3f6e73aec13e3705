#pragma once
// Shared by the screening tests: running the program, scratch folders, and a canonical
// dump of a store (every row of every table keyed by hashes instead of row ids, without
// the columns that record when and how long), so that two stores compare as text.
#include <SQLiteCpp/Database.h>
#include <SQLiteCpp/Statement.h>
#include <fcntl.h>
#include <fmt/format.h>
#include <signal.h>
#include <spawn.h>
#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>
#include <vector>

extern char** environ;

namespace overtone::testing {

inline std::string source_path(const std::string& relative) {
  return std::string(OVERTONE_SOURCE_DIR) + "/" + relative;
}

inline std::string screen_data(const std::string& name) { return source_path("tests/data/screen/" + name); }

// A fresh folder per test (CTest runs tests as parallel processes).
inline std::filesystem::path scratch_folder(const std::string& name) {
  const auto folder =
      std::filesystem::temp_directory_path() / fmt::format("overtone-screen-test-{}-{}", name, getpid());
  std::filesystem::remove_all(folder);
  std::filesystem::create_directories(folder);
  return folder;
}

inline std::string file_text(const std::filesystem::path& path) {
  std::ifstream stream(path);
  std::ostringstream text;
  text << stream.rdbuf();
  return text.str();
}

struct ProgramRun {
  int status = -1;
  std::string out;
  std::string err;
};

// Starts a program with its own stdout/stderr files; returns its pid.
inline pid_t spawn_program(const std::vector<std::string>& arguments, const std::filesystem::path& out,
                           const std::filesystem::path& err) {
  posix_spawn_file_actions_t actions;
  posix_spawn_file_actions_init(&actions);
  posix_spawn_file_actions_addopen(&actions, STDIN_FILENO, "/dev/null", O_RDONLY, 0);
  posix_spawn_file_actions_addopen(&actions, STDOUT_FILENO, out.c_str(), O_WRONLY | O_CREAT | O_TRUNC, 0644);
  posix_spawn_file_actions_addopen(&actions, STDERR_FILENO, err.c_str(), O_WRONLY | O_CREAT | O_TRUNC, 0644);
  std::vector<char*> argv;
  for (const std::string& argument : arguments) argv.push_back(const_cast<char*>(argument.c_str()));
  argv.push_back(nullptr);
  pid_t pid = -1;
  if (posix_spawn(&pid, argv[0], &actions, nullptr, argv.data(), environ) != 0) pid = -1;
  posix_spawn_file_actions_destroy(&actions);
  return pid;
}

inline int wait_exit_status(pid_t pid) {
  int status = 0;
  waitpid(pid, &status, 0);
  return WIFEXITED(status) ? WEXITSTATUS(status) : 128 + (WIFSIGNALED(status) ? WTERMSIG(status) : 0);
}

inline ProgramRun run_program(const std::vector<std::string>& arguments,
                              const std::filesystem::path& folder) {
  const auto out = folder / "run.out";
  const auto err = folder / "run.err";
  ProgramRun run;
  const pid_t pid = spawn_program(arguments, out, err);
  if (pid < 0) return run;
  run.status = wait_exit_status(pid);
  run.out = file_text(out);
  run.err = file_text(err);
  return run;
}

inline ProgramRun run_overtone(std::vector<std::string> arguments, const std::filesystem::path& folder) {
  arguments.insert(arguments.begin(), OVERTONE_BINARY);
  return run_program(arguments, folder);
}

inline std::string column_text(const SQLite::Column& column) {
  if (column.isNull()) return "NULL";
  if (column.isFloat())
    return fmt::format("{}", column.getDouble());  // shortest text that reads back exactly
  return column.getString();
}

// Every row of every table, keyed by settings hash, content hash and variant; result ids,
// times and durations left out (they differ between two runs that agree). Sorted lines.
inline std::vector<std::string> store_dump(const std::filesystem::path& path) {
  SQLite::Database db(path.string(), SQLite::OPEN_READONLY);
  std::vector<std::string> lines;
  auto add_rows = [&](const std::string& table, const std::string& sql,
                      const std::vector<std::string>& skip) {
    SQLite::Statement query(db, sql);
    while (query.executeStep()) {
      std::string line = table;
      for (int c = 0; c < query.getColumnCount(); ++c) {
        const std::string name = query.getColumnName(c);
        if (std::find(skip.begin(), skip.end(), name) != skip.end()) continue;
        line += " " + name + "=" + column_text(query.getColumn(c));
      }
      lines.push_back(line);
    }
  };
  add_rows("run", "SELECT settings_hash, settings, potential, stages FROM runs", {});
  add_rows("molecule",
           "SELECT content_hash, name, origin, record_format, record, formula, atom_count FROM molecules",
           {});
  const std::string keys =
      "SELECT runs.settings_hash, molecules.content_hash, results.variant, t.* FROM {} t JOIN results USING "
      "(result_id) JOIN molecules USING (molecule_id) JOIN runs USING (run_id)";
  add_rows("result",
           "SELECT runs.settings_hash, molecules.content_hash, results.* FROM results JOIN molecules USING "
           "(molecule_id) JOIN runs USING (run_id)",
           {"result_id", "run_id", "molecule_id", "seconds", "finished"});
  for (const char* table : {"modes", "resonances", "levels", "families"})
    add_rows(table, fmt::format(keys, table), {"result_id"});
  std::sort(lines.begin(), lines.end());
  return lines;
}

inline long long count_rows(const std::filesystem::path& path, const std::string& sql) {
  SQLite::Database db(path.string(), SQLite::OPEN_READONLY);
  return db.execAndGet(sql).getInt64();
}

}  // namespace overtone::testing
