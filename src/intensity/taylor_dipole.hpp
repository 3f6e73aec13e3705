#pragma once
// Dipole surface terms of a Taylor-expansion file in normal coordinates
// (docs/taylor-expansion-format.md, "Dipole surface"): a [dipole] table with the first
// derivatives ∂μ/∂q_k, the second ∂²μ/∂q_k∂q_l and the diagonal third ∂³μ/∂q_k³ with
// respect to the file's dimensionless normal coordinates q. The potential's loader ignores
// the table; this stage reads it.
#include <Eigen/Dense>
#include <array>
#include <optional>
#include <string>
#include <vector>

#include "harmonic/harmonic.hpp"
#include "intensity/dipole_source.hpp"
#include "potential/taylor_expansion_potential.hpp"

namespace overtone {

struct DipoleSurfaceTerms {
  struct Term {
    std::vector<int> modes;  // 0-based mode indices of the file, ascending
    Eigen::Vector3d value;   // e·Å
  };
  std::vector<Term> first, second, third;            // third: diagonal (k, k, k) only
  std::optional<Eigen::Vector3d> dipole_e_angstrom;  // the permanent dipole, when given
  bool empty() const { return first.empty() && second.empty() && third.empty(); }
};

// The [dipole] table of a Taylor-expansion text (empty terms when there is none). Throws
// Error naming the key for a malformed table, an index outside the modes or an unknown unit.
DipoleSurfaceTerms parse_dipole_surface(const std::string& toml_text, const std::string& origin,
                                        int mode_count);

// The Taylor-expansion file's normal-coordinate frame bound to a molecule: Cartesian first
// and second dipole derivatives from the surface terms, rotated onto the molecule.
class TaylorDipole final : public DipoleSource {
 public:
  // Throws Error when the expansion is not in normal coordinates, has no first derivatives,
  // or does not match the molecule's elements.
  TaylorDipole(const TaylorExpansionData& expansion, DipoleSurfaceTerms terms, const Molecule& molecule,
               std::string origin);
  std::string description() const override {
    return "dipole surface of the Taylor expansion (" + origin_ + ")";
  }
  std::string notes() const override;
  std::size_t atom_count() const override { return static_cast<std::size_t>(reference_.size() / 3); }
  Eigen::MatrixXd dipole_derivatives(const Eigen::VectorXd& coordinates_angstrom) const override;
  std::optional<Eigen::Vector3d> dipole(const Eigen::VectorXd& coordinates_angstrom) const override;
  bool has_dipole_second_derivatives() const override { return !terms_.second.empty(); }
  std::array<Eigen::MatrixXd, 3> dipole_second_derivatives(
      const Eigen::VectorXd& coordinates_angstrom) const override;

 private:
  Eigen::VectorXd reference_;  // 3N, the file's geometry
  Eigen::MatrixXd to_normal_;  // M × 3N: q = J (x − x_ref) in the file frame
  DipoleSurfaceTerms terms_;
  std::string origin_;
};

// The [dipole] table of the harmonic result's normal coordinates (first derivatives from the
// source, and its permanent dipole), to append to a written Taylor expansion of the same
// modes (write_taylor_expansion of taylor_expansion_from_force_constants).
std::string dipole_surface_text(const HarmonicResult& harmonic, const DipoleSource& source);

}  // namespace overtone
