// Fuzz target: the valence force-field loader (parse_valence_force_field) on arbitrary
// text, bound to a molecule with the elements the text declares (the shipped molecule
// with those elements when there is one, else atoms on a helix), then evaluated with
// derivatives.
#include <openbabel/elements.h>

#include <cstddef>
#include <cstdint>
#include <filesystem>
#include <map>
#include <string>
#include <vector>

#include "core/error.hpp"
#include "fuzz_support.hpp"
#include "molecule/read_molecule.hpp"
#include "potential/valence_force_field.hpp"

namespace {

// The shipped molecules by element sequence, read once.
const std::map<std::vector<int>, overtone::Molecule>& shipped_molecules() {
  static const std::map<std::vector<int>, overtone::Molecule> molecules = [] {
    std::map<std::vector<int>, overtone::Molecule> found;
    for (const auto& entry : std::filesystem::directory_iterator(OVERTONE_SOURCE_DIR "/molecules")) {
      if (entry.path().extension() != ".xyz") continue;
      overtone::Molecule molecule = overtone::read_molecule(entry.path().string()).molecule;
      std::vector<int> elements;
      for (const auto& atom : molecule.atoms) elements.push_back(atom.atomic_number);
      found.emplace(elements, molecule);
    }
    return found;
  }();
  return molecules;
}

// The element symbols of the first line that starts with "elements", without a TOML
// parser of its own (the loader's parser is the one under test). Unknown symbols and
// lists longer than the limit give an empty list.
std::vector<int> declared_elements(const std::string& text) {
  std::size_t line_start = 0;
  while (line_start < text.size()) {
    std::size_t line_end = text.find('\n', line_start);
    if (line_end == std::string::npos) line_end = text.size();
    const std::string line = text.substr(line_start, line_end - line_start);
    if (line.rfind("elements", 0) == 0) {
      std::vector<int> elements;
      for (std::size_t open = line.find('"'); open != std::string::npos; open = line.find('"', open + 1)) {
        const std::size_t close = line.find('"', open + 1);
        if (close == std::string::npos) break;
        const std::string symbol = line.substr(open + 1, close - open - 1);
        const unsigned number = OpenBabel::OBElements::GetAtomicNum(symbol.c_str());
        if (number == 0 || elements.size() == overtone::fuzz::largest_atom_count) return {};
        elements.push_back(static_cast<int>(number));
        open = close;
      }
      return elements;
    }
    line_start = line_end + 1;
  }
  return {};
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string text(reinterpret_cast<const char*>(data), size);
  std::vector<int> elements = declared_elements(text);
  if (elements.empty()) elements = {8, 1, 1};  // still parse the text: the mismatch comes after it
  const auto shipped = shipped_molecules().find(elements);
  const overtone::Molecule molecule =
      shipped != shipped_molecules().end() ? shipped->second : overtone::fuzz::molecule_on_helix(elements);
  try {
    const auto potential = overtone::parse_valence_force_field(text, "fuzz input", molecule);
    volatile double sink = overtone::fuzz::evaluate_everything(*potential, molecule);
    (void)sink;
  } catch (const overtone::Error&) {
    // Bad input reported the documented way.
  }
  return 0;
}
