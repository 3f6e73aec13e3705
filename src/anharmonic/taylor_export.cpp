#include "anharmonic/taylor_export.hpp"

#include <fmt/format.h>

#include <cmath>
#include <limits>

#include "core/error.hpp"
#include "core/units.hpp"

namespace overtone {

TaylorExpansionData taylor_expansion_from_force_constants(
    const ForceConstantResult& force_constants, const HarmonicResult& harmonic, const Molecule& molecule,
    ExpansionCoordinates coordinates, const std::string& title, double reference_energy_kcal_mol) {
  if (!force_constants.ok())
    throw Error("cannot export force constants with status " + to_string(force_constants.status));
  const int m = static_cast<int>(force_constants.mode_count());
  const Eigen::Index n = harmonic.coordinates_angstrom.size();
  if (static_cast<int>(harmonic.mode_count()) != m ||
      static_cast<Eigen::Index>(3 * molecule.atom_count()) != n)
    throw Error(
        fmt::format("force constants for {} modes, harmonic result for {} modes and {} coordinates, molecule "
                    "with {} atoms do not belong together",
                    m, harmonic.mode_count(), n, molecule.atom_count()));
  TaylorExpansionData data;
  data.title = title.empty() ? molecule.formula() : title;
  data.source =
      "exported by Overtone: " + force_constants.method + fmt::format(", step {}", force_constants.step);
  data.coordinates = coordinates;
  for (const auto& atom : molecule.atoms) data.atomic_numbers.push_back(atom.atomic_number);
  data.masses_da = harmonic.masses_da;
  data.reference_angstrom = harmonic.coordinates_angstrom;
  data.reference_energy_kcal_mol = reference_energy_kcal_mol;

  const auto cubic = force_constants.constants.cubic_entries(0.0);
  const auto quartic = force_constants.constants.quartic_entries(0.0);
  const detail::NormalCoordinateFrame frame(harmonic);
  if (coordinates == ExpansionCoordinates::normal) {
    data.frequencies_cm1 = force_constants.frequencies_cm1;
    data.mode_displacements = frame.to_cartesian;
    for (const auto& e : cubic)
      data.derivatives.push_back({{e.i, e.j, e.k}, e.value * units::kcal_mol_per_cm1});
    for (const auto& e : quartic)
      data.derivatives.push_back({{e.i, e.j, e.k, e.l}, e.value * units::kcal_mol_per_cm1});
    return data;
  }

  // q = J·Δx with J the pseudo-inverse of to_cartesian restricted to vibrations:
  // J = diag(sqrt(ω/ħ)) Lᵀ M^{1/2}.
  Eigen::MatrixXd j(m, n);
  for (int k = 0; k < m; ++k) {
    const double omega = std::sqrt(std::abs(harmonic.eigenvalues[k]));
    for (Eigen::Index r = 0; r < n; ++r)
      j(k, r) = std::sqrt(omega / units::hbar_internal) * harmonic.mass_weighted_modes(r, k) *
                std::sqrt(harmonic.masses_da[r / 3]);
  }
  const Eigen::MatrixXd second =
      j.transpose() * (force_constants.frequencies_cm1 * units::kcal_mol_per_cm1).asDiagonal() * j;
  for (Eigen::Index a = 0; a < n; ++a)
    for (Eigen::Index b = a; b < n; ++b)
      data.derivatives.push_back({{static_cast<int>(a), static_cast<int>(b)}, second(a, b)});

  // Contract one index at a time: full tensors over modes, then over Cartesians.
  auto contract = [&](std::vector<double> tensor, int rank) {
    // tensor has shape (m)^rank; returns shape (n)^rank.
    std::vector<Eigen::Index> shape(static_cast<std::size_t>(rank), m);
    for (int axis = 0; axis < rank; ++axis) {
      std::size_t before = 1, after = 1;
      for (int a = 0; a < axis; ++a) before *= static_cast<std::size_t>(shape[static_cast<std::size_t>(a)]);
      for (int a = axis + 1; a < rank; ++a)
        after *= static_cast<std::size_t>(shape[static_cast<std::size_t>(a)]);
      std::vector<double> next(before * static_cast<std::size_t>(n) * after, 0.0);
      for (std::size_t p = 0; p < before; ++p)
        for (int k = 0; k < m; ++k)
          for (std::size_t s = 0; s < after; ++s) {
            const double value =
                tensor[(p * static_cast<std::size_t>(m) + static_cast<std::size_t>(k)) * after + s];
            if (value == 0.0) continue;
            for (Eigen::Index c = 0; c < n; ++c)
              next[(p * static_cast<std::size_t>(n) + static_cast<std::size_t>(c)) * after + s] +=
                  value * j(k, c);
          }
      tensor.swap(next);
      shape[static_cast<std::size_t>(axis)] = n;
    }
    return tensor;
  };
  const auto& t = force_constants.constants;
  const std::size_t mm = static_cast<std::size_t>(m), nn = static_cast<std::size_t>(n);
  std::vector<double> phi3(mm * mm * mm);
  for (int a = 0; a < m; ++a)
    for (int b = 0; b < m; ++b)
      for (int c = 0; c < m; ++c)
        phi3[(static_cast<std::size_t>(a) * mm + b) * mm + c] = t.cubic(a, b, c) * units::kcal_mol_per_cm1;
  const std::vector<double> third = contract(phi3, 3);
  for (std::size_t a = 0; a < nn; ++a)
    for (std::size_t b = a; b < nn; ++b)
      for (std::size_t c = b; c < nn; ++c)
        data.derivatives.push_back(
            {{static_cast<int>(a), static_cast<int>(b), static_cast<int>(c)}, third[(a * nn + b) * nn + c]});
  std::vector<double> phi4(mm * mm * mm * mm);
  for (int a = 0; a < m; ++a)
    for (int b = 0; b < m; ++b)
      for (int c = 0; c < m; ++c)
        for (int d = 0; d < m; ++d)
          phi4[((static_cast<std::size_t>(a) * mm + b) * mm + c) * mm + d] =
              t.quartic(a, b, c, d) * units::kcal_mol_per_cm1;
  const std::vector<double> fourth = contract(phi4, 4);
  for (std::size_t a = 0; a < nn; ++a)
    for (std::size_t b = a; b < nn; ++b)
      for (std::size_t c = b; c < nn; ++c)
        for (std::size_t d = c; d < nn; ++d)
          data.derivatives.push_back(
              {{static_cast<int>(a), static_cast<int>(b), static_cast<int>(c), static_cast<int>(d)},
               fourth[((a * nn + b) * nn + c) * nn + d]});
  return data;
}

void TaylorExportOptions::validate() const {
  force_constants.validate();
  write.validate();
}

std::string export_taylor_expansion(const Potential& potential, const HarmonicResult& harmonic,
                                    const Molecule& molecule, const TaylorExportOptions& options) {
  options.validate();
  ForceConstantOptions fc_options = options.force_constants;
  fc_options.full_quartic_max_modes = std::numeric_limits<int>::max();
  const ForceConstantResult fc = compute_force_constants(potential, harmonic, fc_options);
  if (!fc.ok()) throw Error("cannot export the potential as a taylor expansion: " + fc.message);
  Eigen::VectorXd gradient;
  const double energy = potential.energy_and_gradient(harmonic.coordinates_angstrom, gradient);
  const TaylorExpansionData data = taylor_expansion_from_force_constants(
      fc, harmonic, molecule, options.coordinates, options.title, energy);
  return write_taylor_expansion(data, options.write);
}

}  // namespace overtone
