#include "potential/make_potential.hpp"

#include <fmt/format.h>

#include <filesystem>
#include <fstream>
#include <sstream>

#include "core/error.hpp"
#include "potential/detail_toml_text.hpp"
#include "potential/openbabel_potential.hpp"
#include "potential/taylor_expansion_potential.hpp"
#include "potential/valence_force_field.hpp"

namespace overtone {

std::unique_ptr<Potential> make_potential(const std::string& name_or_path, const Molecule& molecule) {
  if (!canonical_openbabel_force_field(name_or_path).empty())
    return std::make_unique<OpenBabelPotential>(name_or_path, molecule);
  std::error_code ec;
  if (!std::filesystem::exists(name_or_path, ec))
    throw Error(
        fmt::format("'{}' is neither a force field (MMFF94, MMFF94s, UFF, GAFF, Ghemical) nor an "
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
