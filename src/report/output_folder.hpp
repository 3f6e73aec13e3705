#pragma once
// Writing an output folder so that it is either complete or absent: every file goes into
// a hidden temporary folder beside the target (".NAME.incomplete-PID"), and only when all
// of them are written is that folder renamed to the target. A failed run removes its
// temporary folder; an interrupted one leaves only that hidden, plainly named folder,
// never a folder under the target name with part of the files.
#include <functional>
#include <ostream>
#include <string>
#include <vector>

namespace overtone {

struct OutputFile {
  std::string relative_path;  // inside the folder, e.g. "analysis.json", "families/family-01-nu1.csv"
  std::string content;
  // When set, writes the file instead of `content`: a large document goes straight to the
  // file rather than through one string of its whole text.
  std::function<void(std::ostream&)> write = nullptr;
};

struct OutputFolderResult {
  std::string folder;                // the target, as given
  std::vector<std::string> written;  // relative paths, in the order given
  bool replaced_previous = false;    // an earlier output folder of this program was replaced
};

// Writes the files into folder. An existing folder is replaced only when it is empty or
// holds nothing but what this program writes (analysis.json, report.txt, report.html, modes.csv, lines.csv,
// *.csv backbones, a families/ folder of them, an animations/ folder of mode-*.xyz and family-*.xyz);
// anything else there is left alone and Error is thrown, as it is for a relative path that leaves the folder
// or a file that cannot be written (the message names the path and the reason).
OutputFolderResult write_output_folder(const std::string& folder, const std::vector<OutputFile>& files);

}  // namespace overtone
