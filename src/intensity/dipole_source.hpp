#pragma once
// Where the electric response of a molecule comes from: the dipole moment μ and
// polarizability α as functions of the nuclear positions, through their first Cartesian
// derivatives at the analysed geometry. One interface for every kind of source:
//   - fixed partial charges (the force field's, or a valence force-field file's `charges`):
//     μ = Σ_a q_a r_a, so ∂μ_α/∂x_{aβ} = q_a δ_αβ; no polarizability. A fixed-charge model
//     ignores charge flux (the change of the charges as bonds stretch) and gives rough
//     intensities;
//   - an electric-response file of our own format (docs/intensities.md): atomic polar
//     tensors P_a = ∂μ/∂r_a (3×3 per atom) and optionally polarizability derivatives
//     ∂α/∂r_a, as an electronic-structure calculation writes them, at the file's geometry
//     and in the file's frame; they are rotated onto the analysed geometry.
//
// Units: positions Å (atom-major 3N vectors as everywhere), dipole e·Å, dipole derivatives
// e (e·Å per Å), polarizability Å³ (α/(4πε₀)), polarizability derivatives Å² (Å³ per Å).
// Layouts: dipole derivatives are 3 × 3N, column 3a+β holding ∂μ/∂x_{aβ}; polarizability
// derivatives are 6 × 3N, rows αxx, αyy, αzz, αxy, αxz, αyz.
#include <Eigen/Dense>
#include <array>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "core/molecule.hpp"

namespace overtone {

class DipoleSource {
 public:
  virtual ~DipoleSource() = default;
  // What the numbers come from, e.g. "fixed partial charges (MMFF94)".
  virtual std::string description() const = 0;
  // Plain words on how far to trust the intensities of this source.
  virtual std::string notes() const = 0;
  virtual std::size_t atom_count() const = 0;
  // ∂μ/∂x at the geometry (3 × 3N, e). Throws Error for a geometry of the wrong size.
  virtual Eigen::MatrixXd dipole_derivatives(const Eigen::VectorXd& coordinates_angstrom) const = 0;
  // The permanent dipole at the geometry (e·Å), when the source knows it.
  virtual std::optional<Eigen::Vector3d> dipole(const Eigen::VectorXd& coordinates_angstrom) const = 0;
  // Second derivatives ∂²μ_α/∂x∂x (one 3N × 3N matrix per component α, e/Å), when known.
  virtual bool has_dipole_second_derivatives() const { return false; }
  virtual std::array<Eigen::MatrixXd, 3> dipole_second_derivatives(
      const Eigen::VectorXd& coordinates_angstrom) const;
  virtual bool has_polarizability_derivatives() const { return false; }
  // ∂α/∂x (6 × 3N, Å²); throws Error when has_polarizability_derivatives() is false.
  virtual Eigen::MatrixXd polarizability_derivatives(const Eigen::VectorXd& coordinates_angstrom) const;
  // Caveats met while setting the source up (e.g. a file geometry far from the analysed one).
  virtual std::vector<std::string> warnings() const { return {}; }

 protected:
  void check_size(const Eigen::VectorXd& coordinates_angstrom) const;
};

// The statement every fixed-charge result carries.
inline constexpr const char* fixed_charge_notes =
    "a fixed-charge model ignores charge flux (the charges do not change as the bonds stretch and bend), so "
    "its infrared intensities are rough, often wrong by a factor of several; no polarizability: no Raman "
    "activities";

class FixedChargeDipole final : public DipoleSource {
 public:
  // charges_e: one per atom (elementary charges); origin names them, e.g. "MMFF94". Throws
  // Error for an empty list or a charge that is not finite.
  FixedChargeDipole(std::vector<double> charges_e, std::string origin);
  std::string description() const override;
  std::string notes() const override { return fixed_charge_notes; }
  std::size_t atom_count() const override { return charges_.size(); }
  Eigen::MatrixXd dipole_derivatives(const Eigen::VectorXd& coordinates_angstrom) const override;
  std::optional<Eigen::Vector3d> dipole(const Eigen::VectorXd& coordinates_angstrom) const override;
  const std::vector<double>& charges() const { return charges_; }

 private:
  std::vector<double> charges_;
  std::string origin_;
};

// The contents of an electric-response file (docs/intensities.md), converted to the units
// above, in the file's own frame.
struct ElectricResponseData {
  std::string title;
  std::string citation;
  std::string method;
  std::vector<std::string> elements;
  Eigen::VectorXd positions_angstrom;                         // 3N, the geometry the tensors belong to
  Eigen::MatrixXd dipole_derivatives;                         // 3 × 3N, e
  std::optional<Eigen::MatrixXd> polarizability_derivatives;  // 6 × 3N, Å²
  std::optional<Eigen::Vector3d> dipole_e_angstrom;           // permanent dipole, when given
};

// Reads an electric-response file; throws Error naming the file, key and line for a
// malformed file, an unknown unit or a tensor of the wrong shape.
ElectricResponseData read_electric_response(const std::string& path);
ElectricResponseData parse_electric_response(const std::string& toml_text, const std::string& origin);

struct PolarTensorOptions {
  // Largest root-mean-square distance (Å) between the file's geometry, rigidly rotated onto
  // the analysed one, and the analysed geometry before a warning says the tensors belong to
  // another structure (bond lengths of different methods differ by ~0.01–0.02 Å; common
  // practice, no source).
  double geometry_warning_angstrom = 0.05;
  // Beyond this (Å) the file describes another molecule or another atom order: refused.
  double geometry_limit_angstrom = 0.5;
};

class PolarTensorDipole final : public DipoleSource {
 public:
  // Binds the file's tensors to the molecule: the elements must agree atom by atom; the
  // file geometry is rotated (proper rotation, least squares about the centroids) onto the
  // molecule's. Throws Error for a mismatch.
  PolarTensorDipole(ElectricResponseData data, const Molecule& molecule,
                    const PolarTensorOptions& options = {});
  std::string description() const override;
  std::string notes() const override;
  std::size_t atom_count() const override { return data_.elements.size(); }
  Eigen::MatrixXd dipole_derivatives(const Eigen::VectorXd& coordinates_angstrom) const override;
  std::optional<Eigen::Vector3d> dipole(const Eigen::VectorXd& coordinates_angstrom) const override;
  bool has_polarizability_derivatives() const override {
    return data_.polarizability_derivatives.has_value();
  }
  Eigen::MatrixXd polarizability_derivatives(const Eigen::VectorXd& coordinates_angstrom) const override;
  std::vector<std::string> warnings() const override { return warnings_; }

 private:
  Eigen::Matrix3d rotation_to(const Eigen::VectorXd& coordinates_angstrom) const;
  ElectricResponseData data_;
  PolarTensorOptions options_;
  std::vector<std::string> warnings_;
};

// The proper rotation R minimizing Σ_a |R (p_a − p̄) − (x_a − x̄)|² (Kabsch), and the rms
// distance left. Both 3N vectors of the same size.
Eigen::Matrix3d best_rotation(const Eigen::VectorXd& from_angstrom, const Eigen::VectorXd& to_angstrom,
                              double* rms_left_angstrom = nullptr);

}  // namespace overtone
