#pragma once
// Out-of-plane energy of a general force field as a linear model in per-centre
// parameters, with an exact analytic gradient. Not part of the promised API (namespace
// detail); used by OpenBabelPotential, whose library gives an out-of-plane gradient that
// disagrees with its own energy.
//
// Every centre has exactly three bonded neighbours; each neighbour in turn is the
// out-of-plane atom, measured by its Wilson angle χ against the plane of the centre and
// the other two (sin χ = n̂·ê, n̂ the unit normal of that plane, ê the unit bond vector
// to the out-of-plane neighbour). The two functional forms:
//   - squared Wilson angle (MMFF94, MMFF94s; Halgren, J. Comput. Chem. 17, 490 (1996)):
//       E_c = k_c · (0.043844 / 2) · Σ_three χ², χ in degrees, one parameter per centre;
//   - cosine series (UFF; Rappé et al., J. Am. Chem. Soc. 114, 10024 (1992)):
//       E_c = Σ_three K (C0 + C1 cos χ + C2 cos 2χ). With u = 1 − cos χ, cos 2χ =
//       1 − 4u + 2u², so each term is K (C0 + C1 + C2) − K (C1 + 4 C2) u + 2 K C2 u²:
//       a_c Σ u + b_c Σ u² per centre plus one constant shared by all. u and u² are
//       used instead of cos χ and cos 2χ because those two are nearly equal (both ≈ 1)
//       at the small angles a fit samples, which would make the least-squares problem
//       ill-conditioned.
// The parameters are not read from a parameter file but fitted to the library's own
// out-of-plane energy, so the model follows whatever parameters the library assigned
// (fallback parameters, duplicated terms) as long as the functional form matches —
// which the fit's check at fresh geometries confirms or refutes.
#include <Eigen/Dense>
#include <array>
#include <functional>
#include <string>
#include <vector>

namespace overtone::detail {

enum class OutOfPlaneForm { squared_wilson_angle, cosine_series };

struct OutOfPlaneCentre {
  int atom = 0;                          // 0-based
  std::array<int, 3> neighbours{};       // 0-based
  std::array<double, 2> coefficients{};  // per feature; the second unused for squared_wilson_angle
};

class OutOfPlaneModel {
 public:
  OutOfPlaneModel() = default;
  OutOfPlaneModel(OutOfPlaneForm form, std::vector<OutOfPlaneCentre> centres, double constant = 0.0)
      : form_(form), centres_(std::move(centres)), constant_(constant) {}

  static int features_per_centre(OutOfPlaneForm form) {
    return form == OutOfPlaneForm::squared_wilson_angle ? 1 : 2;
  }

  // The geometry functions the parameters multiply, for one centre at coordinates x (Å).
  std::array<double, 2> features(const Eigen::VectorXd& x, const OutOfPlaneCentre& centre) const;

  double energy(const Eigen::VectorXd& x) const;
  // Adds dE/dx of the model (constant excluded, it has none) to gradient.
  void add_gradient(const Eigen::VectorXd& x, Eigen::VectorXd& gradient) const;

  OutOfPlaneForm form() const { return form_; }
  const std::vector<OutOfPlaneCentre>& centres() const { return centres_; }
  double constant() const { return constant_; }

 private:
  OutOfPlaneForm form_ = OutOfPlaneForm::squared_wilson_angle;
  std::vector<OutOfPlaneCentre> centres_;
  double constant_ = 0.0;
};

struct OutOfPlaneFitOptions {
  // Random displacement of every coordinate, uniform in ±amplitude (Å), about the input
  // geometry: large enough that the model's features differ clearly between geometries
  // (Wilson angles of several degrees), small enough to stay in the molecule's shape.
  double displacement_amplitude_angstrom = 0.1;
  // Geometries per unknown (the fit is overdetermined so that a wrong functional form
  // leaves a residual instead of being interpolated).
  int geometries_per_unknown = 2;
  // Fresh geometries for the check, half of them at twice the amplitude (the model has
  // to hold away from where it was fitted).
  int check_geometries = 12;
  // Largest allowed |model − reference| at the check geometries, relative to the largest
  // |reference| there. The reference is a sum of terms with rounding ~1e-15 relative;
  // measured residuals of right forms are 2e-16–1e-14 (MMFF94 and UFF, molecules of
  // tests/potential), while a wrong form misses by orders of magnitude more than 1e-10.
  double relative_tolerance = 1e-10;
  unsigned seed = 20240611;

  void validate() const;  // throws Error naming the field that is out of range
};

struct OutOfPlaneFit {
  OutOfPlaneModel model;
  bool accepted = false;
  double relative_residual = 0.0;  // at the check geometries
  std::string reason;              // why not accepted (empty when accepted)
};

// Fits the model's parameters to reference(x) (the library's out-of-plane energy,
// kcal/mol) about x0 and checks it at fresh geometries.
OutOfPlaneFit fit_out_of_plane_model(OutOfPlaneForm form, const std::vector<OutOfPlaneCentre>& centres,
                                     const Eigen::VectorXd& x0,
                                     const std::function<double(const Eigen::VectorXd&)>& reference,
                                     const OutOfPlaneFitOptions& options = {});

}  // namespace overtone::detail
