#pragma once
// Molecules as VibrationalSystems, and the symmetry data the families need from the
// symmetry stage.
//
// The Hamiltonian is H = ½|P|² + V(Q) with
//     V(Q) = E(x_eq + M^{-1/2} L Q) − E(x_eq) − g_eq · M^{-1/2} L Q
// in the rectilinear vibrational normal coordinates Q (Å·Da^½) of a HarmonicResult
// (L = mass_weighted_modes). Rotation–vibration coupling is neglected (rectilinear
// normal coordinates of a non-rotating molecule). The last term removes the residual
// gradient g_eq of the optimized geometry so that Q = 0 is exactly stationary; its size
// is reported by residual_gradient_norm().
#include <Eigen/Dense>
#include <limits>
#include <string>
#include <vector>

#include "families/family_types.hpp"
#include "families/vibrational_system.hpp"
#include "harmonic/harmonic.hpp"
#include "potential/potential.hpp"
#include "symmetry/detect_point_group.hpp"
#include "symmetry/mode_symmetry.hpp"

namespace overtone {

// How Hessian–vector products H·D (D with k columns) are formed.
enum class HessianProducts {
  // The cheapest per call of what the potential offers: k analytic Hessian–vector
  // products, one analytic Hessian, or 2k gradients by central differences, from the
  // cost of each measured once at construction. Analytic and differenced results agree
  // to ~1e-7 relative.
  automatic,
  // The cheaper of the potential's analytic Hessian and Hessian–vector products (Error
  // if it has neither).
  analytic,
  finite_differences,  // central differences of gradients
};

struct MolecularSystemOptions {
  HessianProducts hessian_products = HessianProducts::automatic;
  // Largest atomic displacement (Å) of a central-difference step along a unit normal
  // coordinate: truncation error ~ step²·|V''''|, round-off ~ ε·|∇V|/step; 1e-3 Å keeps
  // both near 1e-7 relative for force fields in double precision.
  double finite_difference_step_angstrom = 1e-3;
  // Lowest energy above the minimum (cm⁻¹) at which the surface is known to turn over,
  // e.g. from scan_normal_coordinates; a continuation that fails close below it is
  // reported as an escape over that barrier. Infinity: none known.
  double escape_energy_cm1 = std::numeric_limits<double>::infinity();

  void validate() const;  // throws Error naming the field that is out of range
};

class MolecularVibrationalSystem : public VibrationalSystem {
 public:
  // Keeps references to potential (must outlive this object); copies what it needs from
  // harmonic. Throws Error for size mismatches or a harmonic frequency that is not
  // positive (a saddle point or an unconverged structure).
  MolecularVibrationalSystem(const Potential& potential, const HarmonicResult& harmonic,
                             const MolecularSystemOptions& options = {});

  std::string description() const override;
  int dimension() const override { return static_cast<int>(frequencies_.size()); }
  Eigen::VectorXd harmonic_angular_frequencies() const override { return frequencies_; }
  UnitConventions units() const override { return molecular_unit_conventions(); }
  // Linear molecules: the rotation about the molecular axis.
  std::vector<Eigen::MatrixXd> symmetry_generators() const override;
  Eigen::VectorXd cartesian_displacement_angstrom(const Eigen::VectorXd& q) const override;
  bool supports_concurrent_evaluation() const override { return potential_.supports_concurrent_evaluation(); }

  // |g_eq projected on the vibrational coordinates|, kcal/mol/(Å·Da^½).
  double residual_gradient_norm() const { return residual_gradient_.norm(); }
  // How hessian_times() forms its products, e.g. "analytic Hessian-vector products for up
  // to 5 directions, else the analytic Hessian".
  std::string hessian_method() const;
  // M^{-1/2} L, 3N × n: Cartesian displacement (Å) per unit normal coordinate.
  const Eigen::MatrixXd& displacement_matrix() const { return displacement_; }

 protected:
  double compute_potential(const Eigen::VectorXd& q) const override;
  void compute_gradient(const Eigen::VectorXd& q, Eigen::VectorXd& g) const override;
  void compute_hessian_times(const Eigen::VectorXd& q, const Eigen::MatrixXd& directions,
                             Eigen::MatrixXd& out) const override;
  double hessian_step() const override { return step_; }
  double escape_energy() const override { return escape_energy_; }

 private:
  enum class Way { differences, products, hessian };  // order of the names in hessian_method()
  Way way_for(Eigen::Index directions) const;
  void difference_products(const Eigen::VectorXd& q, const Eigen::MatrixXd& directions,
                           Eigen::MatrixXd& out) const;
  void analytic_products(const Eigen::VectorXd& q, const Eigen::MatrixXd& directions,
                         Eigen::MatrixXd& out) const;
  void hessian_products(const Eigen::VectorXd& q, const Eigen::MatrixXd& directions,
                        Eigen::MatrixXd& out) const;

  const Potential& potential_;
  Eigen::VectorXd equilibrium_;
  Eigen::MatrixXd displacement_;  // C = M^{-1/2} L
  Eigen::VectorXd frequencies_;
  Eigen::VectorXd residual_gradient_;  // Cᵀ g_eq
  double reference_energy_ = 0.0;
  bool linear_ = false;
  Eigen::MatrixXd axial_generator_;  // linear molecules only
  // Measured cost of one call, seconds (infinity: not available or not allowed).
  double difference_seconds_per_direction_ = std::numeric_limits<double>::infinity();  // 2 gradients
  double product_seconds_per_direction_ = std::numeric_limits<double>::infinity();     // one analytic H·v
  double hessian_seconds_ = std::numeric_limits<double>::infinity();                   // one analytic Hessian
  double step_ = 1e-3;
  double escape_energy_ = std::numeric_limits<double>::infinity();  // system units
};

// The point group acting on the normal coordinates for the families: the matrices of the
// mode symmetry (on the harmonic modes, in the frame the species were found), each replaced
// by the nearest orthogonal matrix (polar factor) to absorb the residual asymmetry of an
// optimized geometry, with the group's typographic operation names. For linear molecules
// the generator of rotations about the molecular axis is added. Throws Error when the sizes
// disagree or a matrix is far from orthogonal (the harmonic geometry does not have the
// group's symmetry).
CoordinateSymmetry molecular_coordinate_symmetry(const PointGroupResult& group, const ModeSymmetry& symmetry,
                                                 const HarmonicResult& harmonic);

// Generator of rotations about the molecular axis acting on the normal coordinates,
// Lᵀ(I ⊗ [a]×)L with a the axis of the (linear) harmonic geometry; antisymmetric n × n.
Eigen::MatrixXd axial_rotation_generator(const HarmonicResult& harmonic);

// Blocks of normal coordinates from the degenerate sets of the mode symmetry, with species
// labels and report numbers: mode_order[k] is the harmonic index of reported mode k+1
// (AnalysisResult::mode_order); empty: numbers are harmonic index + 1.
std::vector<ModeBlock> molecular_mode_blocks(const ModeSymmetry& symmetry, const HarmonicResult& harmonic,
                                             const std::vector<int>& mode_order = {});

}  // namespace overtone
