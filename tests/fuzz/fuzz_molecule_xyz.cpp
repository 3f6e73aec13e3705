// Fuzz target: the molecule reader (read_molecule, XYZ through Open Babel) on arbitrary
// file contents. read_molecule takes a path, so each input is written to a file of this
// process first.
#include <unistd.h>

#include <cstddef>
#include <cstdint>
#include <filesystem>
#include <fstream>
#include <string>

#include "core/error.hpp"
#include "molecule/read_molecule.hpp"

namespace {

// The file each input is written to; removed when the fuzzer exits normally.
struct InputFile {
  std::string path =
      (std::filesystem::temp_directory_path() / ("overtone-fuzz-" + std::to_string(getpid()) + ".xyz"))
          .string();
  ~InputFile() {
    std::error_code ignored;
    std::filesystem::remove(path, ignored);
  }
};

const std::string& input_path() {
  static const InputFile file;
  return file.path;
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  {
    std::ofstream file(input_path(), std::ios::binary | std::ios::trunc);
    file.write(reinterpret_cast<const char*>(data), static_cast<std::streamsize>(size));
  }
  try {
    overtone::ReadOptions options;
    options.format = "xyz";
    const overtone::ReadResult result = overtone::read_molecule(input_path(), options);
    volatile std::size_t sink = result.molecule.formula().size() + result.molecule.atom_count();
    (void)sink;
  } catch (const overtone::Error&) {
    // Bad input reported the documented way.
  }
  return 0;
}
