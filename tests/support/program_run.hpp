#pragma once
// The overtone program run from a test through the shell, with its exit status and its two
// streams, and the check that an error is one clear line.
#include <gtest/gtest.h>
#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>
#include <cstdlib>
#include <fstream>
#include <sstream>
#include <string>

namespace overtone::testing {

struct ProgramRun {
  int status = -1;
  std::string out;
  std::string err;
};

inline std::string slurp(const std::string& path) {
  std::ifstream in(path);
  std::stringstream buffer;
  buffer << in.rdbuf();
  return buffer.str();
}

// A file name of this test process under the test's temporary folder (CTest runs tests as
// parallel processes: each gets its own files).
inline std::string process_temp_path(const std::string& prefix, const std::string& name) {
  return ::testing::TempDir() + prefix + std::to_string(getpid()) + "-" + name;
}

// `overtone ARGUMENTS` (shell words), its streams captured in files named from `prefix`.
inline ProgramRun run_program_line(const std::string& arguments, const std::string& prefix) {
  static int counter = 0;
  const std::string base = process_temp_path(prefix, "run-" + std::to_string(++counter));
  const std::string command =
      std::string(OVERTONE_BINARY) + " " + arguments + " >" + base + ".out 2>" + base + ".err";
  ProgramRun result;
  const int raw = std::system(command.c_str());
  result.status = WIFEXITED(raw) ? WEXITSTATUS(raw) : -1;
  result.out = slurp(base + ".out");
  result.err = slurp(base + ".err");
  return result;
}

inline void expect_one_line_error(const ProgramRun& result, const std::string& fragment) {
  EXPECT_EQ(result.status, 1) << result.err;
  EXPECT_EQ(result.err.rfind("overtone: error: ", 0), 0u) << result.err;
  EXPECT_EQ(std::count(result.err.begin(), result.err.end(), '\n'), 1) << result.err;
  EXPECT_NE(result.err.find(fragment), std::string::npos) << result.err;
}

}  // namespace overtone::testing
