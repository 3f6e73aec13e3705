// Fuzz target: the electric-response reader (parse_electric_response) and the dipole-surface
// reader (parse_dipole_surface) on arbitrary text; a valid electric-response file is bound
// to a molecule of its own atoms at its own geometry and its tensors are evaluated.
#include <cstddef>
#include <cstdint>
#include <string>

#include "core/error.hpp"
#include "fuzz_support.hpp"
#include "intensity/dipole_source.hpp"
#include "intensity/taylor_dipole.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string text(reinterpret_cast<const char*>(data), size);
  try {
    overtone::parse_dipole_surface(text, "fuzz input", 4);
  } catch (const overtone::Error&) {
  }
  try {
    overtone::ElectricResponseData response = overtone::parse_electric_response(text, "fuzz input");
    const std::size_t atoms = response.elements.size();
    if (atoms == 0 || atoms > overtone::fuzz::largest_atom_count) return 0;
    std::vector<int> numbers;
    for (const std::string& symbol : response.elements) {
      // Bind only files whose symbols are elements; the binding itself checks the rest.
      bool known = false;
      for (int z = 1; z <= 118 && !known; ++z)
        if (overtone::element_symbol(z) == symbol) {
          numbers.push_back(z);
          known = true;
        }
      if (!known) return 0;
    }
    overtone::Molecule molecule = overtone::fuzz::molecule_on_helix(numbers);
    molecule.set_coordinates(response.positions_angstrom);
    const overtone::PolarTensorDipole source(std::move(response), molecule);
    volatile double sink = source.dipole_derivatives(molecule.coordinates()).sum();
    if (source.has_polarizability_derivatives())
      sink = sink + source.polarizability_derivatives(molecule.coordinates()).sum();
    (void)sink;
  } catch (const overtone::Error&) {
    // Bad input reported the documented way.
  }
  return 0;
}
