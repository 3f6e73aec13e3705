// An output folder is complete or absent: a failure while writing leaves nothing under the
// target name (and no temporary folder), a rerun replaces an earlier output as a whole,
// and a folder holding anything else is never touched.
#include <gtest/gtest.h>
#include <unistd.h>

#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>

#include "core/error.hpp"
#include "report/output_folder.hpp"

namespace overtone {
namespace {

namespace fs = std::filesystem;

// A fresh, empty parent folder per test (CTest runs tests as parallel processes).
fs::path fresh_parent(const std::string& name) {
  const fs::path parent =
      fs::path(::testing::TempDir()) / ("overtone-output-" + std::to_string(getpid()) + "-" + name);
  fs::remove_all(parent);
  fs::create_directories(parent);
  return parent;
}

std::size_t entries_in(const fs::path& folder) {
  std::size_t count = 0;
  for ([[maybe_unused]] const auto& entry : fs::directory_iterator(folder)) ++count;
  return count;
}

std::string slurp(const fs::path& path) {
  std::ifstream in(path);
  std::stringstream text;
  text << in.rdbuf();
  return text.str();
}

TEST(OutputFolder, WritesEveryFileAndNothingElse) {
  const fs::path parent = fresh_parent("complete");
  const fs::path target = parent / "out";
  const OutputFolderResult result = write_output_folder(
      target.string(),
      {{"analysis.json", "{}\n"}, {"modes.csv", "mode\n"}, {"families/family-01-nu1.csv", "e\n"}});
  EXPECT_EQ(result.written.size(), 3u);
  EXPECT_FALSE(result.replaced_previous);
  EXPECT_EQ(slurp(target / "analysis.json"), "{}\n");
  EXPECT_EQ(slurp(target / "families" / "family-01-nu1.csv"), "e\n");
  EXPECT_EQ(entries_in(parent), 1u);  // the target only: no temporary folder left beside it
}

TEST(OutputFolder, AFailureWhileWritingLeavesNoPartialFolder) {
  const fs::path parent = fresh_parent("failure");
  const fs::path target = parent / "out";
  // The second file makes "families" a file, so the third cannot go into a folder of that
  // name: the failure happens after two files are already written.
  EXPECT_THROW(write_output_folder(target.string(), {{"analysis.json", "{}\n"},
                                                     {"families", "not a folder"},
                                                     {"families/family-01-nu1.csv", "e\n"}}),
               Error);
  EXPECT_FALSE(fs::exists(target));
  EXPECT_EQ(entries_in(parent), 0u);
}

TEST(OutputFolder, AFailedRerunKeepsTheEarlierCompleteOutput) {
  const fs::path parent = fresh_parent("rerun-failure");
  const fs::path target = parent / "out";
  write_output_folder(target.string(), {{"analysis.json", "first\n"}});
  EXPECT_THROW(
      write_output_folder(target.string(),
                          {{"analysis.json", "second\n"}, {"modes.csv/x", "y"}, {"modes.csv", "clash"}}),
      Error);
  EXPECT_EQ(slurp(target / "analysis.json"), "first\n");
  EXPECT_EQ(entries_in(parent), 1u);
}

TEST(OutputFolder, ARerunReplacesTheEarlierOutputAsAWhole) {
  const fs::path parent = fresh_parent("rerun");
  const fs::path target = parent / "out";
  write_output_folder(target.string(),
                      {{"analysis.json", "first\n"}, {"families/family-09-nu9.csv", "old\n"}});
  const OutputFolderResult second =
      write_output_folder(target.string() + "/", {{"analysis.json", "second\n"}});
  EXPECT_TRUE(second.replaced_previous);
  EXPECT_EQ(slurp(target / "analysis.json"), "second\n");
  EXPECT_FALSE(fs::exists(target / "families"));  // nothing stale from the first run
  EXPECT_EQ(entries_in(parent), 1u);
}

TEST(OutputFolder, AFolderWithOtherFilesIsNeverReplaced) {
  const fs::path parent = fresh_parent("foreign");
  const fs::path target = parent / "out";
  fs::create_directories(target);
  std::ofstream(target / "notes.txt") << "mine\n";
  EXPECT_THROW(write_output_folder(target.string(), {{"analysis.json", "{}\n"}}), Error);
  EXPECT_EQ(slurp(target / "notes.txt"), "mine\n");
  EXPECT_EQ(entries_in(target), 1u);
  EXPECT_EQ(entries_in(parent), 1u);
}

TEST(OutputFolder, FileNamesMustStayInsideTheFolder) {
  const fs::path parent = fresh_parent("escape");
  for (const std::string name : {"../outside.csv", "/tmp/absolute.csv", "a/../../b.csv", ""})
    EXPECT_THROW(write_output_folder((parent / "out").string(), {{name, "x"}}), Error) << name;
  EXPECT_EQ(entries_in(parent), 0u);
  EXPECT_THROW(write_output_folder(".", {{"analysis.json", "{}"}}), Error);
}

}  // namespace
}  // namespace overtone
