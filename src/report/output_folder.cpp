#include "report/output_folder.hpp"

#include <unistd.h>

#include <filesystem>
#include <fstream>
#include <system_error>

#include "core/error.hpp"

namespace overtone {

namespace fs = std::filesystem;

namespace {

// What this program puts into an output folder; a folder holding only these may be
// replaced by a new run.
bool is_own_file_name(const std::string& name) {
  const auto ends_with = [&](const std::string& suffix) {
    return name.size() > suffix.size() &&
           name.compare(name.size() - suffix.size(), suffix.size(), suffix) == 0;
  };
  const bool family = name.rfind("family-", 0) == 0;
  return name == "analysis.json" || name == "modes.csv" || name == "lines.csv" || name == "report.txt" ||
         name == "report.html" || (family && ends_with(".csv")) ||
         ((family || name.rfind("mode-", 0) == 0) && ends_with(".xyz"));
}

bool holds_only_own_files(const fs::path& folder, bool nested) {
  for (const fs::directory_entry& entry : fs::directory_iterator(folder)) {
    const std::string name = entry.path().filename().string();
    if (entry.is_directory() && !entry.is_symlink()) {
      if (nested || (name != "families" && name != "animations") || !holds_only_own_files(entry.path(), true))
        return false;
    } else if (!entry.is_regular_file() || entry.is_symlink() || !is_own_file_name(name)) {
      return false;
    }
  }
  return true;
}

// The target without trailing separators, so that "out/" names the folder "out".
fs::path target_path(const std::string& folder) {
  if (folder.empty()) throw Error("the output folder name is empty");
  fs::path path = fs::path(folder).lexically_normal();
  if (path.filename().empty()) path = path.parent_path();
  const std::string name = path.filename().string();
  if (name.empty() || name == "." || name == "..")
    throw Error("the output folder '" + folder +
                "' must name a folder of its own, not '.' or '..' or the root");
  return path;
}

void check_replaceable(const fs::path& target, const std::string& folder) {
  std::error_code ec;
  if (!fs::exists(fs::symlink_status(target, ec))) return;
  if (!fs::is_directory(fs::symlink_status(target)) || fs::is_symlink(target))
    throw Error("the output folder '" + folder + "' exists and is not a folder; choose another name");
  if (fs::equivalent(target, fs::current_path(), ec))
    throw Error("the output folder '" + folder + "' is the current folder; choose a new folder");
  if (!holds_only_own_files(target, false))
    throw Error("the output folder '" + folder +
                "' exists and holds files this program did not write; choose another folder or empty it");
}

void check_relative(const std::string& relative) {
  const fs::path path(relative);
  bool inside = !relative.empty() && path.is_relative();
  for (const fs::path& part : path) inside = inside && part != ".." && part != ".";
  if (!inside)
    throw Error("the output file name '" + relative + "' must be a relative path inside the folder");
}

void write_file(const fs::path& path, const OutputFile& file) {
  std::error_code ec;
  fs::create_directories(path.parent_path(), ec);
  if (ec) throw Error("cannot create folder '" + path.parent_path().string() + "': " + ec.message());
  std::ofstream out(path, std::ios::binary);
  if (!out) throw Error("cannot open '" + path.string() + "' for writing");
  if (file.write)
    file.write(out);
  else
    out << file.content;
  out.close();
  if (!out) throw Error("writing '" + path.string() + "' failed");
}

fs::path sibling(const fs::path& target, const std::string& kind) {
  return target.parent_path() /
         ("." + target.filename().string() + "." + kind + "-" + std::to_string(getpid()));
}

}  // namespace

OutputFolderResult write_output_folder(const std::string& folder, const std::vector<OutputFile>& files) {
  const fs::path target = target_path(folder);
  check_replaceable(target, folder);
  for (const OutputFile& file : files) check_relative(file.relative_path);

  std::error_code ec;
  if (!target.parent_path().empty()) {
    fs::create_directories(target.parent_path(), ec);
    if (ec) throw Error("cannot create folder '" + target.parent_path().string() + "': " + ec.message());
  }
  const fs::path incomplete = sibling(target, "incomplete");
  fs::remove_all(incomplete, ec);
  fs::create_directory(incomplete, ec);
  if (ec) throw Error("cannot create folder '" + incomplete.string() + "': " + ec.message());

  OutputFolderResult result;
  result.folder = folder;
  try {
    for (const OutputFile& file : files) {
      write_file(incomplete / file.relative_path, file);
      result.written.push_back(file.relative_path);
    }
    const fs::path previous = sibling(target, "previous");
    if (fs::exists(target)) {
      fs::remove_all(previous);
      fs::rename(target, previous);
      result.replaced_previous = true;
    }
    try {
      fs::rename(incomplete, target);
    } catch (const fs::filesystem_error&) {
      if (result.replaced_previous) fs::rename(previous, target, ec);
      throw;
    }
    if (result.replaced_previous) fs::remove_all(previous, ec);
  } catch (const fs::filesystem_error& error) {
    fs::remove_all(incomplete, ec);
    throw Error("cannot write the output folder '" + folder + "': " + error.code().message());
  } catch (...) {
    fs::remove_all(incomplete, ec);
    throw;
  }
  return result;
}

}  // namespace overtone
