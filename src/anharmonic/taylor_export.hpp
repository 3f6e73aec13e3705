#pragma once
// Export of a quartic force field into the Taylor-expansion format of the potential stage
// (docs/taylor-expansion-format.md), so that constants computed here can be reused,
// inspected or edited, and read back as a potential.
#include <string>

#include "anharmonic/force_constants.hpp"
#include "core/molecule.hpp"
#include "harmonic/harmonic.hpp"
#include "potential/taylor_expansion_potential.hpp"

namespace overtone {

// The force field V = E_ref + ½Σω q² + (1/6)Σφ q q q + (1/24)Σφ q q q q at the harmonic
// result's geometry, in either form:
//   normal:    the harmonic wavenumbers, the Cartesian displacement of each mode per unit
//              normal coordinate (M^{-1/2} L) and φ as they are;
//   cartesian: ∂ⁿV/∂x… = Σ φ_{i…} J_{i a}…, with J = dq/dx = diag(sqrt(ω/ħ)) Lᵀ M^{1/2}
//              (quartic constants that were not computed contribute nothing).
// The molecule supplies the elements (its atoms must match the harmonic result's).
// Throws Error for a force-constant result that is not ok or mismatched sizes.
TaylorExpansionData taylor_expansion_from_force_constants(
    const ForceConstantResult& force_constants, const HarmonicResult& harmonic, const Molecule& molecule,
    ExpansionCoordinates coordinates, const std::string& title = "", double reference_energy_kcal_mol = 0.0);

struct TaylorExportOptions {
  ExpansionCoordinates coordinates = ExpansionCoordinates::normal;
  std::string title;                     // written into the file; empty: the molecule's formula
  ForceConstantOptions force_constants;  // all φ_ijkl are requested whatever its limit says
  TaylorWriteOptions write;

  void validate() const;  // throws Error naming the field that is out of range
};

// Computes the full quartic force field of the potential at the harmonic result's geometry
// (which must be a minimum) and returns the file text. Throws Error as
// compute_force_constants does, or when the geometry is not a minimum.
std::string export_taylor_expansion(const Potential& potential, const HarmonicResult& harmonic,
                                    const Molecule& molecule, const TaylorExportOptions& options = {});

}  // namespace overtone
