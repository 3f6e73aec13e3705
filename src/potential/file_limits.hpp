#pragma once
// The largest magnitudes the potential-file loaders accept (docs/valence-force-field.md
// and docs/taylor-expansion-format.md list them for users). They lie one to three orders
// of magnitude beyond any molecule's values, so that no real force field is refused,
// while a typing slip such as 1e300 is refused before it reaches the optimizer, where it
// would drive atoms to 1e138 Å and results to overflow. All values are in the program's
// internal units (kcal/mol, Å, rad, Da, cm⁻¹), i.e. after the file's units are converted.
//
// Reference points (common practice, no source): the stiffest bond stretch, C≡O, has
// f_rr ≈ 19 aJ/Å² ≈ 2.7e3 kcal/mol/Å²; quartic stretch constants of hydrides reach
// ~150 aJ/Å⁴ ≈ 2e4 kcal/mol/Å⁴; the strongest bond dissociation energy is ≈ 257 kcal/mol
// (CO); Morse widths lie between 1 and 3 Å⁻¹; torsion barriers are tens of kcal/mol; the
// highest harmonic wavenumber of a molecule is that of H₂, ≈ 4400 cm⁻¹; the heaviest
// nuclide has a mass below 300 Da.

#include "core/units.hpp"

namespace overtone::file_limits {

// |force constant| of any order (f2, f3, f4, coupling f; Cartesian or normal-coordinate
// derivatives), kcal/mol per Å^n rad^m (≈ 6950 aJ per unit^n).
inline constexpr double force_constant_kcal_mol = 1e6;
// Morse depth D_e and |cosine-series barrier|, kcal/mol (≈ 69.5 aJ, 3.5e6 cm⁻¹).
inline constexpr double energy_scale_kcal_mol = 1e4;
// Morse width a, 1/Å.
inline constexpr double morse_width_per_angstrom = 20.0;
// Reference distance (valence force field), Å.
inline constexpr double distance_angstrom = 100.0;
// |pyramid height| reference, Å.
inline constexpr double pyramid_height_angstrom = 10.0;
// |dihedral reference| and |cosine phase|, rad (one full turn either way).
inline constexpr double full_turn_rad = 2.0 * units::pi;
// |Cartesian position| in a Taylor-expansion reference geometry, Å.
inline constexpr double position_angstrom = 1e4;
// Atomic mass, Da.
inline constexpr double mass_da = 1e3;
// Harmonic wavenumber of a normal mode, cm⁻¹.
inline constexpr double wavenumber_cm1 = 1e5;
// |Reference energy| of a Taylor expansion, kcal/mol (absolute energies of large
// molecules in hartree reach ~1e7 kcal/mol).
inline constexpr double reference_energy_kcal_mol = 1e9;
// |entry| of a mode's displacement pattern (any scale; normalized on reading).
inline constexpr double displacement_entry = 1e6;

}  // namespace overtone::file_limits
