#include "potential/detail_out_of_plane_model.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <random>

#include "core/option_checks.hpp"
#include "core/units.hpp"

namespace overtone::detail {

namespace {

// MMFF94's out-of-plane prefactor (md·Å/rad² → kcal/mol/deg², with the ½ of a harmonic
// term), part of the published functional form (Halgren, J. Comput. Chem. 17, 490 (1996)).
constexpr double mmff_out_of_plane_prefactor = 0.043844 / 2.0;
constexpr double degrees_per_radian = 180.0 / units::pi;

Eigen::Vector3d position(const Eigen::VectorXd& x, int atom) { return x.segment<3>(3 * atom); }

// sin χ of the bond centre→d against the plane of a–centre–b, and its derivatives with
// respect to the four positions. With a, b, e the vectors from the centre to a, b, d,
// n = a × b, N = |n|, E = |e|: s = n·e / (N E), and
//   ∂s/∂a = (b × e)/(N E) − s (b × n)/N²,  ∂s/∂b = (e × a)/(N E) − s (n × a)/N²,
//   ∂s/∂e = n/(N E) − s e/E²,  ∂s/∂centre = −(sum of the three)  (translation invariance).
struct WilsonSine {
  double s = 0.0;
  Eigen::Vector3d d_a, d_b, d_d, d_centre;
};

WilsonSine wilson_sine(const Eigen::Vector3d& centre, const Eigen::Vector3d& a_position,
                       const Eigen::Vector3d& b_position, const Eigen::Vector3d& d_position,
                       bool derivatives) {
  const Eigen::Vector3d a = a_position - centre;
  const Eigen::Vector3d b = b_position - centre;
  const Eigen::Vector3d e = d_position - centre;
  const Eigen::Vector3d n = a.cross(b);
  const double n_norm = n.norm();
  const double e_norm = e.norm();
  WilsonSine result;
  const double inverse = 1.0 / (n_norm * e_norm);
  result.s = n.dot(e) * inverse;
  if (!derivatives) return result;
  const double s_over_n2 = result.s / (n_norm * n_norm);
  result.d_a = b.cross(e) * inverse - s_over_n2 * b.cross(n);
  result.d_b = e.cross(a) * inverse - s_over_n2 * n.cross(a);
  result.d_d = n * inverse - (result.s / (e_norm * e_norm)) * e;
  result.d_centre = -(result.d_a + result.d_b + result.d_d);
  return result;
}

}  // namespace

std::array<double, 2> OutOfPlaneModel::features(const Eigen::VectorXd& x,
                                                const OutOfPlaneCentre& centre) const {
  std::array<double, 2> sums{0.0, 0.0};
  const Eigen::Vector3d p = position(x, centre.atom);
  for (int k = 0; k < 3; ++k) {
    const double s =
        wilson_sine(p, position(x, centre.neighbours[(k + 1) % 3]),
                    position(x, centre.neighbours[(k + 2) % 3]), position(x, centre.neighbours[k]), false)
            .s;
    if (form_ == OutOfPlaneForm::squared_wilson_angle) {
      const double chi = std::asin(s) * degrees_per_radian;
      sums[0] += mmff_out_of_plane_prefactor * chi * chi;
    } else {
      // u = 1 − cos χ = s² / (1 + cos χ), free of cancellation at small χ.
      const double u = s * s / (1.0 + std::sqrt(1.0 - s * s));
      sums[0] += u;
      sums[1] += u * u;
    }
  }
  return sums;
}

double OutOfPlaneModel::energy(const Eigen::VectorXd& x) const {
  double total = constant_;
  for (const auto& centre : centres_) {
    const auto f = features(x, centre);
    total += centre.coefficients[0] * f[0] + centre.coefficients[1] * f[1];
  }
  return total;
}

void OutOfPlaneModel::add_gradient(const Eigen::VectorXd& x, Eigen::VectorXd& gradient) const {
  for (const auto& centre : centres_) {
    const Eigen::Vector3d p = position(x, centre.atom);
    for (int k = 0; k < 3; ++k) {
      const int a = centre.neighbours[(k + 1) % 3];
      const int b = centre.neighbours[(k + 2) % 3];
      const int d = centre.neighbours[k];
      const WilsonSine w = wilson_sine(p, position(x, a), position(x, b), position(x, d), true);
      const double cosine = std::sqrt(1.0 - w.s * w.s);
      double de_ds = 0.0;
      if (form_ == OutOfPlaneForm::squared_wilson_angle) {
        // E = k c χ_deg², χ = asin s: dE/ds = 2 k c χ_deg (180/π) / cos χ.
        const double chi = std::asin(w.s) * degrees_per_radian;
        de_ds =
            centre.coefficients[0] * 2.0 * mmff_out_of_plane_prefactor * chi * degrees_per_radian / cosine;
      } else {
        // E = α u + β u², u = 1 − cos χ: du/ds = s / cos χ.
        const double u = w.s * w.s / (1.0 + cosine);
        de_ds = (centre.coefficients[0] + 2.0 * centre.coefficients[1] * u) * w.s / cosine;
      }
      gradient.segment<3>(3 * centre.atom) += de_ds * w.d_centre;
      gradient.segment<3>(3 * a) += de_ds * w.d_a;
      gradient.segment<3>(3 * b) += de_ds * w.d_b;
      gradient.segment<3>(3 * d) += de_ds * w.d_d;
    }
  }
}

void OutOfPlaneFitOptions::validate() const {
  option_checks::require_positive("out-of-plane fit", "displacement_amplitude_angstrom",
                                  displacement_amplitude_angstrom);
  option_checks::require_at_least("out-of-plane fit", "geometries_per_unknown", geometries_per_unknown, 1);
  option_checks::require_at_least("out-of-plane fit", "check_geometries", check_geometries, 1);
  option_checks::require_positive("out-of-plane fit", "relative_tolerance", relative_tolerance);
}

OutOfPlaneFit fit_out_of_plane_model(OutOfPlaneForm form, const std::vector<OutOfPlaneCentre>& centres,
                                     const Eigen::VectorXd& x0,
                                     const std::function<double(const Eigen::VectorXd&)>& reference,
                                     const OutOfPlaneFitOptions& options) {
  options.validate();
  const int per_centre = OutOfPlaneModel::features_per_centre(form);
  const int unknowns = 1 + per_centre * static_cast<int>(centres.size());
  // A few rows beyond the multiple so that even one unknown has a real residual.
  const int rows = options.geometries_per_unknown * unknowns + 4;
  const OutOfPlaneModel shape(form, centres);

  std::mt19937 generator(options.seed);
  auto displaced = [&](double amplitude) {
    std::uniform_real_distribution<double> uniform(-amplitude, amplitude);
    Eigen::VectorXd x = x0;
    for (Eigen::Index k = 0; k < x.size(); ++k) x[k] += uniform(generator);
    return x;
  };
  auto design_row = [&](const Eigen::VectorXd& x) {
    Eigen::RowVectorXd row(unknowns);
    row[0] = 1.0;  // the shared constant (UFF's K (C0 + C1 + C2) over all terms; zero for MMFF94)
    for (std::size_t c = 0; c < centres.size(); ++c) {
      const auto f = shape.features(x, centres[c]);
      for (int j = 0; j < per_centre; ++j) row[1 + per_centre * static_cast<Eigen::Index>(c) + j] = f[j];
    }
    return row;
  };

  Eigen::MatrixXd design(rows, unknowns);
  Eigen::VectorXd energies(rows);
  for (int r = 0; r < rows; ++r) {
    const Eigen::VectorXd x = displaced(options.displacement_amplitude_angstrom);
    design.row(r) = design_row(x);
    energies[r] = reference(x);
  }
  // Columns scaled to unit largest entry: the constant is O(1), the features O(χ²).
  Eigen::VectorXd column_scale = design.cwiseAbs().colwise().maxCoeff().transpose();
  for (Eigen::Index j = 0; j < column_scale.size(); ++j)
    if (column_scale[j] == 0.0) column_scale[j] = 1.0;
  const Eigen::VectorXd scaled_solution =
      (design * column_scale.cwiseInverse().asDiagonal()).colPivHouseholderQr().solve(energies);
  const Eigen::VectorXd solution = scaled_solution.cwiseQuotient(column_scale);

  std::vector<OutOfPlaneCentre> fitted = centres;
  for (std::size_t c = 0; c < fitted.size(); ++c) {
    fitted[c].coefficients = {0.0, 0.0};
    for (int j = 0; j < per_centre; ++j)
      fitted[c].coefficients[j] = solution[1 + per_centre * static_cast<Eigen::Index>(c) + j];
  }
  OutOfPlaneFit result;
  result.model = OutOfPlaneModel(form, fitted, solution[0]);

  double largest_error = 0.0;
  double largest_reference = 0.0;
  bool finite = solution.allFinite();
  for (int i = 0; i < options.check_geometries; ++i) {
    const double amplitude = options.displacement_amplitude_angstrom * (i % 2 == 0 ? 1.0 : 2.0);
    const Eigen::VectorXd x = displaced(amplitude);
    const double expected = reference(x);
    const double modelled = result.model.energy(x);
    finite = finite && std::isfinite(expected) && std::isfinite(modelled);
    largest_error = std::max(largest_error, std::abs(modelled - expected));
    largest_reference = std::max(largest_reference, std::abs(expected));
  }
  const char* form_name =
      form == OutOfPlaneForm::squared_wilson_angle ? "squared-Wilson-angle" : "cosine-series";
  if (!finite) {
    result.reason = fmt::format("the {} out-of-plane fit gave non-finite values", form_name);
    return result;
  }
  if (largest_reference == 0.0) {
    result.reason = "the out-of-plane energy is zero at every check geometry, so the fit cannot be checked";
    return result;
  }
  result.relative_residual = largest_error / largest_reference;
  result.accepted = result.relative_residual <= options.relative_tolerance;
  if (!result.accepted)
    result.reason = fmt::format(
        "the fitted {} out-of-plane model misses the force field's out-of-plane energy by {:.2e} of its size "
        "at fresh geometries (allowed {:.0e}): the force field's terms do not have that form here",
        form_name, result.relative_residual, options.relative_tolerance);
  return result;
}

}  // namespace overtone::detail
