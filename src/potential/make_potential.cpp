#include "potential/make_potential.hpp"

#include <fmt/format.h>

#include <cctype>
#include <filesystem>
#include <fstream>
#include <sstream>

#include "core/error.hpp"
#include "potential/detail_toml_text.hpp"
#include "potential/mmff_potential.hpp"
#include "potential/openbabel_potential.hpp"
#include "potential/taylor_expansion_potential.hpp"
#include "potential/valence_force_field.hpp"

namespace overtone {

namespace {

std::string lower(std::string text) {
  for (auto& c : text) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return text;
}

}  // namespace

std::string openbabel_mmff_name(const std::string& name) {
  const std::string suffix = std::string(openbabel_variant_suffix);
  const std::string text = lower(name);
  if (text.size() <= suffix.size() || text.compare(text.size() - suffix.size(), suffix.size(), suffix) != 0)
    return {};
  const std::string variant = canonical_mmff_variant(name.substr(0, name.size() - suffix.size()));
  return variant.empty() ? std::string() : variant + openbabel_variant_suffix;
}

std::unique_ptr<Potential> make_potential(const std::string& name_or_path, const Molecule& molecule) {
  // MMFF94 and MMFF94s run compiled; "<name>-openbabel" asks for Open Babel's own
  // evaluation of the same force field (for comparison), the other general force
  // fields always go through Open Babel.
  if (!canonical_mmff_variant(name_or_path).empty())
    return std::make_unique<MmffPotential>(name_or_path, molecule);
  const std::string bridged = openbabel_mmff_name(name_or_path);
  if (!bridged.empty())
    return std::make_unique<OpenBabelPotential>(
        bridged.substr(0, bridged.size() - std::string(openbabel_variant_suffix).size()), molecule);
  if (!canonical_openbabel_force_field(name_or_path).empty())
    return std::make_unique<OpenBabelPotential>(name_or_path, molecule);
  std::error_code ec;
  if (!std::filesystem::exists(name_or_path, ec))
    throw Error(
        fmt::format("'{}' is neither a force field (MMFF94, MMFF94s, MMFF94-openbabel, MMFF94s-openbabel, "
                    "UFF, GAFF, Ghemical) nor an "
                    "existing potential file",
                    name_or_path));
  if (std::filesystem::is_directory(name_or_path, ec))
    throw Error(fmt::format("'{}' is a directory, expected a potential file", name_or_path));
  std::ifstream in(name_or_path, std::ios::binary);
  if (!in) throw Error(fmt::format("cannot open the potential file '{}'", name_or_path));
  std::ostringstream text;
  text << in.rdbuf();
  // The kind comes from the format line itself, so a malformed file of either kind is
  // reported as that kind.
  if (detail::potential_file_kind(text.str()) == detail::PotentialFileKind::taylor_expansion)
    return std::make_unique<TaylorExpansionPotential>(parse_taylor_expansion(text.str(), name_or_path),
                                                      molecule);
  return parse_valence_force_field(text.str(), name_or_path, molecule);
}

}  // namespace overtone
