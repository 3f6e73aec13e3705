// Fuzz target: the Taylor-expansion loader (parse_taylor_expansion) on arbitrary text,
// then, when the text is a valid file, the potential bound to a molecule with the
// file's own atoms at its own reference geometry, evaluated with derivatives.
#include <cstddef>
#include <cstdint>
#include <string>

#include "core/error.hpp"
#include "fuzz_support.hpp"
#include "potential/taylor_expansion_potential.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string text(reinterpret_cast<const char*>(data), size);
  try {
    overtone::TaylorExpansionData expansion = overtone::parse_taylor_expansion(text, "fuzz input");
    const std::size_t atoms = expansion.atomic_numbers.size();
    if (atoms == 0 || atoms > overtone::fuzz::largest_atom_count ||
        expansion.reference_angstrom.size() != static_cast<Eigen::Index>(3 * atoms))
      return 0;
    overtone::Molecule molecule = overtone::fuzz::molecule_on_helix(expansion.atomic_numbers);
    molecule.set_coordinates(expansion.reference_angstrom);
    const overtone::TaylorExpansionPotential potential(std::move(expansion), molecule);
    volatile double sink = overtone::fuzz::evaluate_everything(potential, molecule);
    (void)sink;
  } catch (const overtone::Error&) {
    // Bad input reported the documented way.
  }
  return 0;
}
