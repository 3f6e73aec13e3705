#include "support/model_systems.hpp"

#include <fmt/format.h>

#include <cmath>

#include "core/error.hpp"
#include "core/units.hpp"

namespace overtone {

namespace {
void require_positive(double value, const char* what) {
  if (!(value > 0.0) || !std::isfinite(value))
    throw Error(fmt::format("{} must be a positive finite number, got {}", what, value));
}
}  // namespace

// ---- Morse -------------------------------------------------------------------------

MorseOscillator::MorseOscillator(double dissociation_energy, double angular_frequency, UnitConventions units)
    : dissociation_energy_(dissociation_energy),
      angular_frequency_(angular_frequency),
      units_(std::move(units)) {
  require_positive(dissociation_energy, "morse dissociation energy");
  require_positive(angular_frequency, "morse harmonic angular frequency");
  range_ = angular_frequency_ / std::sqrt(2.0 * dissociation_energy_);
}

std::string MorseOscillator::description() const {
  return fmt::format("Morse oscillator, D = {:.6g}, omega0 = {:.6g} ({})", dissociation_energy_,
                     angular_frequency_, units_.name);
}

Eigen::VectorXd MorseOscillator::harmonic_angular_frequencies() const {
  return Eigen::VectorXd::Constant(1, angular_frequency_);
}

double MorseOscillator::compute_potential(const Eigen::VectorXd& q) const {
  const double one_minus = 1.0 - std::exp(-range_ * q(0));
  return dissociation_energy_ * one_minus * one_minus;
}

void MorseOscillator::compute_gradient(const Eigen::VectorXd& q, Eigen::VectorXd& g) const {
  const double decay = std::exp(-range_ * q(0));
  g(0) = 2.0 * dissociation_energy_ * range_ * (1.0 - decay) * decay;
}

void MorseOscillator::compute_hessian_times(const Eigen::VectorXd& q, const Eigen::MatrixXd& directions,
                                            Eigen::MatrixXd& out) const {
  const double decay = std::exp(-range_ * q(0));
  const double curvature = 2.0 * dissociation_energy_ * range_ * range_ * decay * (2.0 * decay - 1.0);
  out = curvature * directions;
}

MorseOscillator morse_from_spectroscopic_constants(double omega_e_cm1, double omega_e_x_e_cm1) {
  require_positive(omega_e_cm1, "omega_e (cm-1)");
  require_positive(omega_e_x_e_cm1, "omega_e x_e (cm-1)");
  const double dissociation_cm1 = omega_e_cm1 * omega_e_cm1 / (4.0 * omega_e_x_e_cm1);
  return MorseOscillator(dissociation_cm1 * units::kcal_mol_per_cm1,
                         omega_e_cm1 / units::cm1_per_internal_angular_frequency,
                         molecular_unit_conventions());
}

// ---- cosine (pendulum-like) --------------------------------------------------------

CosineOscillator::CosineOscillator(double stiffness) : stiffness_(stiffness) {
  require_positive(stiffness, "cosine potential stiffness");
}

std::string CosineOscillator::description() const {
  return fmt::format("cosine oscillator V = {:.6g} (1 - cos q)", stiffness_);
}

Eigen::VectorXd CosineOscillator::harmonic_angular_frequencies() const {
  return Eigen::VectorXd::Constant(1, std::sqrt(stiffness_));
}

double CosineOscillator::compute_potential(const Eigen::VectorXd& q) const {
  return stiffness_ * (1.0 - std::cos(q(0)));
}

void CosineOscillator::compute_gradient(const Eigen::VectorXd& q, Eigen::VectorXd& g) const {
  g(0) = stiffness_ * std::sin(q(0));
}

void CosineOscillator::compute_hessian_times(const Eigen::VectorXd& q, const Eigen::MatrixXd& directions,
                                             Eigen::MatrixXd& out) const {
  out = stiffness_ * std::cos(q(0)) * directions;
}

// ---- Duffing -----------------------------------------------------------------------

DuffingOscillator::DuffingOscillator(double angular_frequency, double quartic_coefficient)
    : angular_frequency_(angular_frequency), quartic_coefficient_(quartic_coefficient) {
  require_positive(angular_frequency, "duffing angular frequency");
  if (!std::isfinite(quartic_coefficient))
    throw Error(fmt::format("duffing quartic coefficient must be finite, got {}", quartic_coefficient));
}

std::string DuffingOscillator::description() const {
  return fmt::format("Duffing oscillator, omega = {:.6g}, beta = {:.6g}", angular_frequency_,
                     quartic_coefficient_);
}

Eigen::VectorXd DuffingOscillator::harmonic_angular_frequencies() const {
  return Eigen::VectorXd::Constant(1, angular_frequency_);
}

double DuffingOscillator::escape_energy() const {
  if (quartic_coefficient_ >= 0.0) return std::numeric_limits<double>::infinity();
  const double omega2 = angular_frequency_ * angular_frequency_;
  return omega2 * omega2 / (4.0 * -quartic_coefficient_);
}

double DuffingOscillator::compute_potential(const Eigen::VectorXd& q) const {
  const double q2 = q(0) * q(0);
  return 0.5 * angular_frequency_ * angular_frequency_ * q2 + 0.25 * quartic_coefficient_ * q2 * q2;
}

void DuffingOscillator::compute_gradient(const Eigen::VectorXd& q, Eigen::VectorXd& g) const {
  g(0) = angular_frequency_ * angular_frequency_ * q(0) + quartic_coefficient_ * q(0) * q(0) * q(0);
}

void DuffingOscillator::compute_hessian_times(const Eigen::VectorXd& q, const Eigen::MatrixXd& directions,
                                              Eigen::MatrixXd& out) const {
  out = (angular_frequency_ * angular_frequency_ + 3.0 * quartic_coefficient_ * q(0) * q(0)) * directions;
}

// ---- Hénon–Heiles ------------------------------------------------------------------

std::string HenonHeiles::description() const {
  return "Henon-Heiles potential V = (x^2+y^2)/2 + x^2 y - y^3/3";
}

Eigen::VectorXd HenonHeiles::harmonic_angular_frequencies() const { return Eigen::VectorXd::Ones(2); }

double HenonHeiles::compute_potential(const Eigen::VectorXd& q) const {
  const double x = q(0), y = q(1);
  return 0.5 * (x * x + y * y) + x * x * y - y * y * y / 3.0;
}

void HenonHeiles::compute_gradient(const Eigen::VectorXd& q, Eigen::VectorXd& g) const {
  const double x = q(0), y = q(1);
  g(0) = x + 2.0 * x * y;
  g(1) = y + x * x - y * y;
}

void HenonHeiles::compute_hessian_times(const Eigen::VectorXd& q, const Eigen::MatrixXd& directions,
                                        Eigen::MatrixXd& out) const {
  const double x = q(0), y = q(1);
  Eigen::Matrix2d hessian;
  hessian << 1.0 + 2.0 * y, 2.0 * x, 2.0 * x, 1.0 - 2.0 * y;
  out = hessian * directions;
}

std::vector<Eigen::MatrixXd> HenonHeiles::symmetry_matrices() {
  const double angle = 2.0 * units::pi / 3.0;
  Eigen::Matrix2d rotation;
  rotation << std::cos(angle), -std::sin(angle), std::sin(angle), std::cos(angle);
  Eigen::Matrix2d reflection;
  reflection << -1.0, 0.0, 0.0, 1.0;
  const Eigen::Matrix2d identity = Eigen::Matrix2d::Identity();
  return {identity,
          rotation,
          rotation * rotation,
          reflection,
          reflection * rotation,
          reflection * rotation * rotation};
}

std::vector<std::string> HenonHeiles::symmetry_labels() {
  return {"E", "C3", "C3^2", "sigma", "sigma C3", "sigma C3^2"};
}

// ---- Resonant pair -------------------------------------------------------------------

ResonantPair::ResonantPair(double omega1, double omega2, double cubic, double quartic)
    : omega1_(omega1), omega2_(omega2), cubic_(cubic), quartic_(quartic) {
  require_positive(omega1, "resonant pair omega1");
  require_positive(omega2, "resonant pair omega2");
  if (!std::isfinite(cubic))
    throw Error(fmt::format("resonant pair cubic coefficient must be finite, got {}", cubic));
  if (!(quartic >= 0.0) || !std::isfinite(quartic))
    throw Error(fmt::format("resonant pair quartic coefficient must be non-negative, got {}", quartic));
}

std::string ResonantPair::description() const {
  return fmt::format("resonant pair, omega = {:.6g}, {:.6g}, a = {:.6g}, b = {:.6g}", omega1_, omega2_,
                     cubic_, quartic_);
}

Eigen::VectorXd ResonantPair::harmonic_angular_frequencies() const {
  Eigen::VectorXd w(2);
  w << omega1_, omega2_;
  return w;
}

std::vector<Eigen::MatrixXd> ResonantPair::symmetry_matrices() {
  Eigen::MatrixXd flip = Eigen::MatrixXd::Identity(2, 2);
  flip(0, 0) = -1.0;
  return {flip};
}

std::vector<std::string> ResonantPair::symmetry_labels() { return {"flip"}; }

double ResonantPair::compute_potential(const Eigen::VectorXd& q) const {
  const double x = q(0), y = q(1), r2 = x * x + y * y;
  return 0.5 * omega1_ * omega1_ * x * x + 0.5 * omega2_ * omega2_ * y * y + cubic_ * x * x * y +
         quartic_ * r2 * r2;
}

void ResonantPair::compute_gradient(const Eigen::VectorXd& q, Eigen::VectorXd& g) const {
  const double x = q(0), y = q(1), r2 = x * x + y * y;
  g(0) = omega1_ * omega1_ * x + 2.0 * cubic_ * x * y + 4.0 * quartic_ * r2 * x;
  g(1) = omega2_ * omega2_ * y + cubic_ * x * x + 4.0 * quartic_ * r2 * y;
}

void ResonantPair::compute_hessian_times(const Eigen::VectorXd& q, const Eigen::MatrixXd& directions,
                                         Eigen::MatrixXd& out) const {
  const double x = q(0), y = q(1), r2 = x * x + y * y;
  Eigen::Matrix2d h;
  h(0, 0) = omega1_ * omega1_ + 2.0 * cubic_ * y + 4.0 * quartic_ * (r2 + 2.0 * x * x);
  h(1, 1) = omega2_ * omega2_ + 4.0 * quartic_ * (r2 + 2.0 * y * y);
  h(0, 1) = h(1, 0) = 2.0 * cubic_ * x + 8.0 * quartic_ * x * y;
  out = h * directions;
}

}  // namespace overtone
