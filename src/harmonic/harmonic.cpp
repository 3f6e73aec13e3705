#include "harmonic/harmonic.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <string>

#include "core/error.hpp"
#include "core/option_checks.hpp"
#include "core/units.hpp"
#include "harmonic/inertia.hpp"

namespace overtone {

namespace {

void require_finite(const Eigen::MatrixXd& matrix, const std::string& what) {
  if (!matrix.allFinite()) throw Error(what + " contains non-finite entries (nan or inf)");
}

// Cartesian displacement, reduced mass and force constant of mode k from its
// mass-weighted vector.
void update_mode_properties(HarmonicResult& result, Eigen::Index k,
                            const Eigen::VectorXd& inverse_sqrt_mass) {
  const Eigen::VectorXd cartesian = inverse_sqrt_mass.asDiagonal() * result.mass_weighted_modes.col(k);
  const double squared_norm = cartesian.squaredNorm();
  result.cartesian_displacements.col(k) = cartesian / std::sqrt(squared_norm);
  result.reduced_masses_da[k] = 1.0 / squared_norm;
  result.stiffness_aj_per_angstrom2[k] = result.eigenvalues[k] * result.reduced_masses_da[k] *
                                         units::attojoule_per_angstrom2_per_kcal_mol_per_angstrom2;
}

Eigen::VectorXd inverse_sqrt_masses(const Eigen::VectorXd& masses_da) {
  Eigen::VectorXd inverse_sqrt_mass(3 * masses_da.size());
  for (Eigen::Index i = 0; i < inverse_sqrt_mass.size(); ++i)
    inverse_sqrt_mass[i] = 1.0 / std::sqrt(masses_da[i / 3]);
  return inverse_sqrt_mass;
}

// Imaginary modes beyond the warning threshold make the result a non-minimum: a status
// and message for stages that need a minimum, and the same words as a warning for reports.
void set_status(HarmonicResult& result, const NormalModeOptions& options) {
  const Eigen::Index imaginary = (result.frequencies_cm1.array() < -options.imaginary_warning_cm1).count();
  if (imaginary == 0) {
    result.status = HarmonicStatus::ok;
    result.message = fmt::format("{} vibrational modes, none imaginary beyond {} cm-1", result.mode_count(),
                                 options.imaginary_warning_cm1);
    return;
  }
  result.status = HarmonicStatus::not_a_minimum;
  result.message = fmt::format(
      "{} mode(s) with imaginary frequency (largest {:.2f}i cm-1): the geometry is not a minimum of this "
      "potential",
      imaginary, -result.frequencies_cm1.minCoeff());
  result.warnings.push_back(result.message);
}

}  // namespace

void replace_mode_vector(HarmonicResult& harmonic, Eigen::Index k,
                         const Eigen::VectorXd& mass_weighted_mode) {
  if (k < 0 || k >= harmonic.mass_weighted_modes.cols() ||
      mass_weighted_mode.size() != harmonic.mass_weighted_modes.rows())
    throw Error(
        fmt::format("a mode vector of {} entries for mode index {} does not fit a harmonic result with {} "
                    "modes of {} entries",
                    mass_weighted_mode.size(), k, harmonic.mass_weighted_modes.cols(),
                    harmonic.mass_weighted_modes.rows()));
  harmonic.mass_weighted_modes.col(k) = mass_weighted_mode;
  update_mode_properties(harmonic, k, inverse_sqrt_masses(harmonic.masses_da));
}

std::string to_string(HarmonicStatus status) {
  switch (status) {
    case HarmonicStatus::ok:
      return "ok";
    case HarmonicStatus::not_a_minimum:
      return "not_a_minimum";
  }
  return "unknown";
}

void HessianOptions::validate() const {
  option_checks::require_positive("hessian", "finite_difference_step_angstrom",
                                  finite_difference_step_angstrom);
  option_checks::require_in_open("hessian", "linearity_tolerance", linearity_tolerance, 0.0, 1.0);
}

void NormalModeOptions::validate() const {
  option_checks::require_in_open("normal-mode", "linearity_tolerance", linearity_tolerance, 0.0, 1.0);
  option_checks::require_non_negative("normal-mode", "imaginary_warning_cm1", imaginary_warning_cm1);
  option_checks::require_positive("normal-mode", "max_wavenumber_cm1", max_wavenumber_cm1);
}

HessianResult compute_hessian(const Potential& potential, const Eigen::VectorXd& coordinates_angstrom,
                              const HessianOptions& options) {
  options.validate();
  const Eigen::Index n = coordinates_angstrom.size();
  HessianResult result;
  if (options.prefer_analytic && potential.has_analytic_hessian()) {
    result.hessian = potential.hessian(coordinates_angstrom);
    result.method = "analytic";
  } else {
    // Column k is dg/dx_k by central differences of analytic gradients: error O(h²)
    // from third derivatives plus O(ε_g/h) from gradient round-off.
    const double step = options.finite_difference_step_angstrom;
    result.hessian.resize(n, n);
    Eigen::VectorXd displaced = coordinates_angstrom;
    Eigen::VectorXd gradient_plus, gradient_minus;
    for (Eigen::Index k = 0; k < n; ++k) {
      displaced[k] = coordinates_angstrom[k] + step;
      potential.energy_and_gradient(displaced, gradient_plus);
      displaced[k] = coordinates_angstrom[k] - step;
      potential.energy_and_gradient(displaced, gradient_minus);
      displaced[k] = coordinates_angstrom[k];
      result.hessian.col(k) = (gradient_plus - gradient_minus) / (2.0 * step);
    }
    result.gradient_evaluations = static_cast<std::size_t>(2 * n);
    result.method = "central differences of gradients";
  }
  if (result.hessian.rows() != n || result.hessian.cols() != n)
    throw Error(fmt::format("hessian has shape {}x{}, expected {}x{}", result.hessian.rows(),
                            result.hessian.cols(), n, n));
  require_finite(result.hessian, "the hessian");
  result.asymmetry = (result.hessian - result.hessian.transpose()).cwiseAbs().maxCoeff();
  result.hessian = 0.5 * (result.hessian + result.hessian.transpose()).eval();
  if (options.enforce_rigid_body_invariance && n >= 6) {
    const Eigen::MatrixXd rigid =
        rigid_body_basis(coordinates_angstrom, Eigen::VectorXd::Ones(n / 3), options.linearity_tolerance);
    // P H P with P = I − RRᵀ, by rank-r updates.
    const Eigen::MatrixXd h_rigid = result.hessian * rigid;
    const Eigen::MatrixXd removed = rigid * h_rigid.transpose() + h_rigid * rigid.transpose() -
                                    rigid * (rigid.transpose() * h_rigid) * rigid.transpose();
    result.rigid_body_residual = removed.cwiseAbs().maxCoeff();
    result.hessian -= removed;
    result.hessian = 0.5 * (result.hessian + result.hessian.transpose()).eval();
  }
  return result;
}

Eigen::MatrixXd rigid_body_basis(const Eigen::VectorXd& x, const Eigen::VectorXd& masses,
                                 double linearity_tolerance, bool* is_linear) {
  const Eigen::Index atoms = masses.size();
  const Eigen::Vector3d center = center_of_mass(x, masses);
  const Eigen::SelfAdjointEigenSolver<Eigen::Matrix3d> principal(inertia_tensor(x, masses));
  const double largest_moment = principal.eigenvalues().maxCoeff();

  // Translations and rotations about principal axes through the centre of mass are
  // mutually orthogonal in mass-weighted space, so normalizing them gives R exactly.
  std::vector<Eigen::VectorXd> vectors;
  for (int axis = 0; axis < 3; ++axis) {
    Eigen::VectorXd translation = Eigen::VectorXd::Zero(3 * atoms);
    for (Eigen::Index i = 0; i < atoms; ++i) translation[3 * i + axis] = std::sqrt(masses[i]);
    vectors.push_back(translation.normalized());
  }
  int rotations = 0;
  for (int axis = 0; axis < 3; ++axis) {
    const double moment = principal.eigenvalues()[axis];
    if (atoms < 2 || moment <= linearity_tolerance * largest_moment) continue;
    const Eigen::Vector3d direction = principal.eigenvectors().col(axis);
    Eigen::VectorXd rotation(3 * atoms);
    for (Eigen::Index i = 0; i < atoms; ++i)
      rotation.segment<3>(3 * i) = std::sqrt(masses[i]) * direction.cross(x.segment<3>(3 * i) - center);
    vectors.push_back(rotation.normalized());
    ++rotations;
  }
  if (is_linear) *is_linear = atoms >= 2 && rotations == 2;
  Eigen::MatrixXd basis(3 * atoms, static_cast<Eigen::Index>(vectors.size()));
  for (std::size_t k = 0; k < vectors.size(); ++k) basis.col(static_cast<Eigen::Index>(k)) = vectors[k];
  return basis;
}

HarmonicResult analyze_normal_modes(const Eigen::VectorXd& coordinates_angstrom,
                                    const Eigen::VectorXd& masses_da,
                                    const Eigen::MatrixXd& cartesian_hessian,
                                    const NormalModeOptions& options) {
  options.validate();
  const Eigen::Index atoms = masses_da.size();
  const Eigen::Index n = 3 * atoms;
  if (atoms < 2) throw Error(fmt::format("a vibrational analysis needs at least 2 atoms, got {}", atoms));
  if (coordinates_angstrom.size() != n)
    throw Error(fmt::format("geometry has {} coordinates, expected {} for {} atoms",
                            coordinates_angstrom.size(), n, atoms));
  if (cartesian_hessian.rows() != n || cartesian_hessian.cols() != n)
    throw Error(fmt::format("hessian is {}x{}, expected {}x{}", cartesian_hessian.rows(),
                            cartesian_hessian.cols(), n, n));
  for (Eigen::Index i = 0; i < atoms; ++i)
    if (!(masses_da[i] > 0.0))
      throw Error(fmt::format("atom {} has non-positive mass {} Da", i + 1, masses_da[i]));
  require_finite(cartesian_hessian, "the hessian");
  if (!coordinates_angstrom.allFinite())
    throw Error("the geometry contains non-finite coordinates (nan or inf)");

  HarmonicResult result;
  result.coordinates_angstrom = coordinates_angstrom;
  result.masses_da = masses_da;
  result.cartesian_hessian = cartesian_hessian;

  const Eigen::VectorXd inverse_sqrt_mass = inverse_sqrt_masses(masses_da);
  const Eigen::MatrixXd mass_weighted =
      inverse_sqrt_mass.asDiagonal() * cartesian_hessian * inverse_sqrt_mass.asDiagonal();

  result.rigid_body_basis =
      rigid_body_basis(coordinates_angstrom, masses_da, options.linearity_tolerance, &result.linear);
  const Eigen::MatrixXd& rigid = result.rigid_body_basis;
  const Eigen::Index r = rigid.cols();
  result.rigid_body_count = static_cast<int>(r);
  const Eigen::Index vib = n - r;
  if (vib < 1) throw Error("the molecule has no vibrational degrees of freedom");

  // PFP by rank-r updates (O(n² r), no dense n³ products). Adding σRRᵀ with σ above
  // the spectrum of PFP lifts the rigid-body directions to the top, so the lowest
  // n − r eigenpairs are exactly the vibrations, whatever their sign.
  const Eigen::MatrixXd f_rigid = mass_weighted * rigid;            // n×r
  const Eigen::MatrixXd rigid_block = rigid.transpose() * f_rigid;  // r×r
  Eigen::MatrixXd projected = mass_weighted;
  projected.noalias() -= rigid * f_rigid.transpose();
  projected.noalias() -= f_rigid * rigid.transpose();
  projected.noalias() += rigid * (rigid_block * rigid.transpose());
  const double spectral_bound = mass_weighted.cwiseAbs().rowwise().sum().maxCoeff();  // Gershgorin
  if (!std::isfinite(spectral_bound))
    throw Error(
        "the hessian's entries are too large to diagonalize (their sums overflow): the potential's "
        "constants are absurd; check their values and units");
  const double lift = 2.0 * spectral_bound + 1.0;
  projected.noalias() += lift * rigid * rigid.transpose();
  projected = 0.5 * (projected + projected.transpose()).eval();

  Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> solver(projected);
  double eigenvalue_scale = 1.0;
  if (solver.info() != Eigen::Success) {
    // The implicit-QR iteration has a fixed iteration budget; scaling the matrix to unit
    // size changes its shifts, which lets a rare stalled case converge.
    eigenvalue_scale = projected.cwiseAbs().maxCoeff();
    if (std::isfinite(eigenvalue_scale) && eigenvalue_scale > 0.0)
      solver.compute(projected / eigenvalue_scale);
    if (solver.info() != Eigen::Success)
      throw Error(fmt::format(
          "the symmetric eigensolver did not converge on the mass-weighted hessian ({} x {}, largest entry "
          "{:.3g} kcal/mol/(Å² Da))",
          projected.rows(), projected.cols(), eigenvalue_scale));
  }
  result.eigenvalues = eigenvalue_scale * solver.eigenvalues().head(vib);
  result.mass_weighted_modes = solver.eigenvectors().leftCols(vib);
  result.rigid_body_eigenvalues = Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd>(rigid_block).eigenvalues();

  result.frequencies_cm1.resize(vib);
  result.reduced_masses_da.resize(vib);
  result.stiffness_aj_per_angstrom2.resize(vib);
  result.cartesian_displacements.resize(n, vib);
  for (Eigen::Index k = 0; k < vib; ++k) {
    auto mode = result.mass_weighted_modes.col(k);
    Eigen::Index largest = 0;
    mode.cwiseAbs().maxCoeff(&largest);
    if (mode[largest] < 0.0) mode *= -1.0;
    result.frequencies_cm1[k] = units::wavenumber_cm1_from_eigenvalue(result.eigenvalues[k]);
    update_mode_properties(result, k, inverse_sqrt_mass);
  }
  // An absurd potential (constants of 1e300) gives finite but meaningless numbers, or
  // non-finite ones; neither may reach a report.
  if (!result.frequencies_cm1.allFinite() || !result.cartesian_displacements.allFinite() ||
      !result.reduced_masses_da.allFinite() || !result.stiffness_aj_per_angstrom2.allFinite())
    throw Error("the normal-mode analysis gave non-finite numbers: the potential's constants are absurd");
  const double largest = result.frequencies_cm1.cwiseAbs().maxCoeff();
  if (largest > options.max_wavenumber_cm1)
    throw Error(fmt::format(
        "a harmonic wavenumber of {:.3g} cm-1 lies far above any molecular vibration (limit {:.0f} cm-1; the "
        "highest, the H2 stretch, is near 4400 cm-1): the potential's force constants are absurd; check "
        "their "
        "values and units",
        largest, options.max_wavenumber_cm1));
  set_status(result, options);
  return result;
}

}  // namespace overtone
