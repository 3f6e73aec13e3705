#include "potential/make_potential.hpp"

#include <fmt/format.h>

#include <filesystem>

#include "core/error.hpp"
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
  if (is_taylor_expansion_file(name_or_path)) return load_taylor_expansion_potential(name_or_path, molecule);
  return load_valence_force_field(name_or_path, molecule);
}

}  // namespace overtone
