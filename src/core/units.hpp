#pragma once
// Physical constants and unit conversions: the only place numbers like these live.
//
// Source: CODATA 2018 recommended values (E. Tiesinga, P. J. Mohr, D. B. Newell,
// B. N. Taylor, Rev. Mod. Phys. 93, 025010 (2021)); h, c and N_A are exact in the
// 2019 SI. The thermochemical calorie is exactly 4.184 J.
//
// Internal units of the library:
//   length  ångström (Å)
//   mass    dalton (Da, unified atomic mass unit)
//   energy  kcal/mol (thermochemical)
// so a gradient is kcal/mol/Å, a Cartesian Hessian kcal/mol/Å², a mass-weighted
// Hessian kcal/mol/(Å² Da), and the natural time unit sqrt(Da Å² / (kcal/mol)).
#include <cmath>

namespace overtone::units {

inline constexpr double pi = 3.14159265358979323846;

// CODATA 2018
inline constexpr double speed_of_light_m_per_s = 299792458.0;         // exact
inline constexpr double planck_j_s = 6.62607015e-34;                  // exact
inline constexpr double avogadro_per_mol = 6.02214076e23;             // exact
inline constexpr double boltzmann_j_per_k = 1.380649e-23;             // exact
inline constexpr double atomic_mass_constant_kg = 1.66053906660e-27;  // dalton in kg
inline constexpr double hartree_j = 4.3597447222071e-18;
inline constexpr double bohr_m = 0.529177210903e-10;
inline constexpr double joule_per_thermochemical_calorie = 4.184;  // exact by definition
inline constexpr double elementary_charge_c = 1.602176634e-19;     // exact
inline constexpr double vacuum_electric_permittivity_f_per_m = 8.8541878128e-12;

inline constexpr double hbar_j_s = planck_j_s / (2.0 * pi);
inline constexpr double angstrom_m = 1e-10;
inline constexpr double attojoule_j = 1e-18;
inline constexpr double femtosecond_s = 1e-15;
inline constexpr double centimetre_m = 1e-2;

// Energy conversions.
inline constexpr double joule_per_kcal_mol = 1000.0 * joule_per_thermochemical_calorie / avogadro_per_mol;
inline constexpr double joule_per_kj_mol = 1000.0 / avogadro_per_mol;
inline constexpr double joule_per_cm1 = planck_j_s * speed_of_light_m_per_s / centimetre_m;
inline constexpr double cm1_per_kcal_mol = joule_per_kcal_mol / joule_per_cm1;  // ≈ 349.755
inline constexpr double kcal_mol_per_cm1 = 1.0 / cm1_per_kcal_mol;
inline constexpr double kcal_mol_per_kj_mol = 1.0 / joule_per_thermochemical_calorie;
inline constexpr double kcal_mol_per_attojoule = attojoule_j / joule_per_kcal_mol;  // ≈ 143.93
inline constexpr double kcal_mol_per_hartree = hartree_j / joule_per_kcal_mol;      // ≈ 627.51
inline constexpr double angstrom_per_bohr = bohr_m / angstrom_m;

// The internal time unit, sqrt(Da Å² / (kcal/mol)), in seconds (≈ 48.89 fs).
inline const double internal_time_unit_s =
    std::sqrt(atomic_mass_constant_kg * angstrom_m * angstrom_m / joule_per_kcal_mol);

// Angular frequency in internal units (1/internal time) to wavenumber in cm⁻¹:
// ν̃ = ω / (2π c).
inline const double cm1_per_internal_angular_frequency =
    1.0 / (internal_time_unit_s * 2.0 * pi * speed_of_light_m_per_s / centimetre_m);

// Eigenvalue λ of a mass-weighted Hessian (kcal/mol/(Å² Da)) to wavenumber (cm⁻¹):
// ν̃ = sqrt(λ) · cm1_per_internal_angular_frequency. Negative λ is reported as a
// negative (imaginary) wavenumber.
inline double wavenumber_cm1_from_eigenvalue(double eigenvalue) {
  const double magnitude = std::sqrt(std::abs(eigenvalue)) * cm1_per_internal_angular_frequency;
  return eigenvalue < 0.0 ? -magnitude : magnitude;
}
inline double eigenvalue_from_wavenumber_cm1(double wavenumber_cm1) {
  const double root = wavenumber_cm1 / cm1_per_internal_angular_frequency;
  return wavenumber_cm1 < 0.0 ? -root * root : root * root;
}

// Force constant in kcal/mol/Å² to mdyn/Å (= aJ/Å²), the unit of the trade.
inline constexpr double mdyn_per_angstrom_per_kcal_mol_per_angstrom2 = 1.0 / kcal_mol_per_attojoule;

// Dipole units: the debye is 1e-21/c C·m by definition (10⁻¹⁸ statC·cm); e·Å in debye.
inline constexpr double debye_c_m = 1e-21 / speed_of_light_m_per_s;
inline constexpr double debye_per_e_angstrom = elementary_charge_c * angstrom_m / debye_c_m;  // ≈ 4.8032
// An atomic unit of dipole derivative (e·a₀ per a₀) is one elementary charge.

// Integrated IR band intensity of a fundamental in the double-harmonic approximation:
//   A = N_A π / (3 c²) · (∂μ/∂Q)² / (4π ε₀)   (SI; Q mass-weighted, μ in C·m),
// here per (∂μ/∂Q)² in e²/Da (μ in e·Å, Q in Å·Da^{1/2}), in km/mol (≈ 974.86).
inline constexpr double km_per_mol_per_e2_per_da =
    avogadro_per_mol * pi * elementary_charge_c * elementary_charge_c /
    (3.0 * speed_of_light_m_per_s * speed_of_light_m_per_s * 4.0 * pi * vacuum_electric_permittivity_f_per_m *
     atomic_mass_constant_kg) /
    1000.0;

// Second radiation constant c₂ = hc/k_B in cm·K, for Boltzmann factors exp(−c₂ ν̃ / T).
inline constexpr double second_radiation_constant_cm_k =
    planck_j_s * speed_of_light_m_per_s / (boltzmann_j_per_k * centimetre_m);

// ħ in internal units (kcal/mol · internal time), for actions J = (n + ½)ħ.
inline const double hbar_internal = hbar_j_s / (joule_per_kcal_mol * internal_time_unit_s);

}  // namespace overtone::units
