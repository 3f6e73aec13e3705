#pragma once
// Families of periodic orbits of H = ½|P|² + V(Q) (a VibrationalSystem): shooting,
// Newton, continuation in energy, Floquet multipliers, events and the semiclassical
// ladder of one family.
//
// Method.
//  * Shooting with the controlled Runge–Kutta–Fehlberg 7(8) stepper of Boost.Odeint on
//    scaled variables (orbit_integrator.hpp), with the variational equations for the
//    monodromy matrix built from Hessian–vector products.
//  * Unknowns restricted to the subspace F = span(invariant_basis) that contains the
//    whole orbit (for a family with spatio-temporal symmetry Σ = {(h, θ(h))}: the fixed
//    space of K = ker θ). When the family has a symmetry g with q(t + T/r) = D(g) q(t),
//    only 1/r of the period is integrated: the shooting equation is
//        φ_{T/r}(y₀) = D(g) y₀        (y = (q, p), both in F).
//  * Newton–Gauss on the consistent over-determined system {shooting equation, energy
//    equation H(y₀) = E, phase condition ⟨y₀ − y_ref, ẏ_ref⟩ = 0}; the Jacobian of the
//    last accepted point is reused with Broyden updates and refreshed when convergence
//    stalls. Iterations integrate with a tolerance matched to the residual expected
//    (newton_tolerance_max down to integration_tolerance); convergence is declared only on
//    an accurate iteration, which at continuation points integrates the whole period with
//    samples and so is the point's verification pass.
//  * Pseudo-arclength continuation in (y₀, T, E) with a tangent predictor and step-size
//    control by the corrector's effort, the backbone's curvature and the distance of the
//    Floquet multipliers from ±1, so folds in energy are passed and reported; the last
//    point is solved at energy_max exactly with the energy fixed.
//  * At every accepted point: the whole period with samples (closure, energy drift,
//    amplitude, action, symmetry residuals on the trajectory) and the variational
//    equations in the whole space (Floquet multipliers
//    M = D(g)^r (D(g)⁻¹ Φ(T/r))^r).
//  * Semiclassical ladder: levels where J = ∮P·dQ / 2π = (n + ½)ħ, located by Hermite
//    interpolation of E(J) (dE/dJ = ω) and refined by Newton in energy on the family.
#include <Eigen/Dense>
#include <complex>
#include <cstddef>
#include <functional>
#include <limits>
#include <optional>
#include <string>
#include <vector>

#include "families/vibrational_system.hpp"

namespace overtone {

// A spatio-temporal symmetry to verify on the computed trajectory:
// matrix · q(t) = q(t + (numerator/denominator)·T) for all t, and the same for p.
struct TrajectorySymmetry {
  std::string label;       // e.g. the operation's name
  Eigen::MatrixXd matrix;  // n × n orthogonal, acting on the system's coordinates
  int numerator = 0;       // time shift as a fraction of the period, in [0, denominator)
  int denominator = 1;     // ≥ 1
};

// Where a family born at a bifurcation of another starts (branch_switching.hpp).
struct BranchStart {
  Eigen::VectorXd positions;  // Q(0) of the parent's orbit at the bifurcation, full space
  Eigen::VectorXd momenta;    // P(0)
  double period = 0.0;        // the new family's period at birth (twice the parent's after a doubling)
  double energy = 0.0;        // birth energy, system units
  // (δQ, δP), length 2n: the new branch's direction at birth (a kernel vector of the
  // parent's monodromy minus ±1).
  Eigen::VectorXd direction;
  // The first point lies this far along the direction, relative to the orbit's size in
  // the scaled coordinates (positions / amplitude); the corrector keeps that distance
  // along the direction and frees the energy, so it cannot fall back onto the parent.
  double step = 0.05;
};

// What to continue: the linear orbit q(t) = Re(v e^{iωt}) of one family and the
// symmetry its orbits keep.
struct FamilySeed {
  Eigen::VectorXcd linear_mode;    // v, length n, any normalization, nonzero
  double angular_frequency = 0.0;  // ω, radians per time unit, > 0
  // Orthonormal n × m basis of the subspace containing the whole orbit; empty: all of R^n.
  Eigen::MatrixXd invariant_basis;
  // q(t + T/r) = shift_matrix · q(t); empty matrix: no such symmetry (r must be 1).
  Eigen::MatrixXd shift_matrix;
  int shift_denominator = 1;               // r ≥ 1
  std::vector<TrajectorySymmetry> checks;  // verified on the trajectory at every point
  // Dimension of the block of equal harmonic frequencies the family belongs to. For d ≥ 2
  // the partner motions start with multipliers at +1, whose stability at the smallest
  // energies is below numerical resolution (see ContinuationOptions::partner_resolution).
  int block_dimension = 1;
  // Set for a family born at a bifurcation: start there instead of from the linear orbit
  // (linear_mode and angular_frequency then only set the scaling: ω of the new family).
  std::optional<BranchStart> branch;
};

struct ContinuationOptions {
  // Largest energy of the family, system energy units above the minimum. Required (> 0).
  double energy_max = 0.0;
  // First point's energy as a fraction of energy_max; lowered tenfold (up to three
  // times) when Newton fails from the linear orbit there.
  double start_energy_fraction = 1e-3;
  // Relative and absolute local error per step of the integrator on the O(1)-scaled
  // state (positions / amplitude, momenta / (ω·amplitude)).
  double integration_tolerance = 1e-12;
  // The same for integrations with variational equations (Newton Jacobians, Floquet
  // multipliers): errors there slow Newton slightly and move multipliers by about this
  // much, far below stability_tolerance.
  double variational_tolerance = 1e-9;
  // Newton stops when every component of the scaled shooting residual (positions and
  // momenta divided by the amplitude and ω·amplitude) and the energy residual divided by
  // the harmonic energy scale ω²·amplitude² are below this. Dimensionless.
  double closure_tolerance = 1e-9;
  // Newton iterations far from convergence integrate with a looser tolerance: a thousandth
  // of the residual expected at that iteration, between integration_tolerance and this.
  // Convergence is only declared on an integration at integration_tolerance, which at
  // continuation points is also the whole-period verification pass (closure, drift,
  // samples). Equal to integration_tolerance: every iteration at full accuracy.
  double newton_tolerance_max = 1e-8;
  int max_newton_iterations = 10;  // per corrector, counting chord steps
  // Pseudo-arclength step in the scaled unknowns (≈ relative change of the orbit).
  double initial_step = 0.1;
  double min_step = 1e-5;
  double max_step = 0.5;
  // Largest energy increase per step as a fraction of energy_max where the backbone bends
  // or a stability event is near (the resolution of the backbone curve there).
  double max_energy_step_fraction = 0.05;
  // Where the backbone is straight and no event is near, steps may grow up to this
  // fraction of energy_max: the frequency, linearly interpolated between neighbouring
  // points, stays within backbone_tolerance (relative) of the curve through the last
  // three points, and no non-neutral Floquet multiplier is near ±1 or on course to reach
  // it within the step. At most max_energy_step_fraction: fixed steps.
  double straight_energy_step_fraction = 0.25;
  double backbone_tolerance = 1e-4;
  int max_points = 400;  // accepted points per family
  // Samples per period for amplitude, energy drift and trajectory symmetry checks
  // (rounded up to a multiple of every time-shift denominator).
  int samples_per_period = 128;
  bool compute_floquet = true;  // whole-space monodromy at every point
  // At accepted points, integrate the variational equations with the Hessian interpolated
  // (8-point Lagrange) between this many nodes per period taken on the sampled orbit,
  // instead of one Hessian product per integrator stage: ~10× fewer potential
  // evaluations. Falls back to direct integration when a leave-one-out test of the
  // interpolation errs by more than 1e-7 of the Hessian's scale. 0: always direct.
  int variational_nodes_per_period = 64;
  // Also integrate one period with direct whole-space variational equations at the first
  // point and report its time (ContinuationResult::seconds_per_variational_period), the
  // unit of cost of the benchmark.
  bool measure_reference_cost = false;
  // A multiplier with modulus above 1 + stability_tolerance is unstable (dimensionless).
  double stability_tolerance = 1e-6;
  // Families of degenerate blocks: until every non-neutral multiplier is at least this far
  // from +1, the partner motions' multipliers are still emerging from the double
  // multiplier at +1 of the linear limit and their stability is not resolved (round-off
  // splits a double multiplier by ~sqrt(1e-10)); stability changes there are not reported
  // as events (a warning says up to which energy). Dimensionless.
  double partner_resolution = 1e-3;
  // An orbit whose |Q| exceeds this many times the harmonic amplitude at energy_max of
  // the softest coordinate is counted as escaped (dimensionless).
  double escape_radius_factor = 20.0;
  // Orbits whose period exceeds this many harmonic periods count as escaped: the period
  // diverges as the energy approaches a separatrix (dissociation, a barrier).
  double max_period_factor = 20.0;
  std::size_t max_integration_steps = 200000;  // per integration
  // Semiclassical ladder: levels n = 0 … ladder_max_level that the family's action reaches.
  int ladder_max_level = 20;
  // Newton in energy until |J − (n+½)ħ| < ladder_tolerance · ħ (dimensionless); 0 turns
  // refinement off (Hermite interpolation only).
  double ladder_tolerance = 1e-9;
  // Told the energy (system units) of every accepted point, on the thread running the
  // continuation; must not throw. Empty: nobody listens.
  std::function<void(double energy)> on_point;

  // Throws Error naming the field, what it may be and what it was. energy_max has no
  // valid default: it must be set first.
  void validate() const;
};

enum class ContinuationStatus {
  reached_energy_max,  // the last point is at energy_max
  escaped,             // orbits stop closing: dissociation or a barrier (see message)
  step_too_small,      // the corrector failed even at min_step
  point_limit,         // max_points reached before energy_max
  start_failed,        // no periodic orbit found near the linear orbit
  turned_back,         // after a fold the family returned below its first energy
  rejoined_parent,     // a born family returned onto the family it was born of (branch_switching.hpp)
};
const char* to_string(ContinuationStatus status);

struct OrbitPoint {
  // In the system's units:
  double energy = 0.0;
  double angular_frequency = 0.0;  // 2π/T
  double period = 0.0;
  double action = 0.0;     // J = ∮P·dQ / 2π
  double amplitude = 0.0;  // largest |Q| along the orbit (length·mass^½)
  // Converted (UnitConventions of the system):
  double energy_cm1 = 0.0;
  double frequency_cm1 = 0.0;
  double period_fs = 0.0;
  double action_hbar = 0.0;  // J / ħ
  // Largest displacement of any atom along the orbit, Å; NaN for model systems.
  double amplitude_angstrom = std::numeric_limits<double>::quiet_NaN();
  // Diagnostics of the whole-period integration (dimensionless):
  double closure_error = 0.0;      // max(|ΔQ|, |ΔP|/ω) after one period / amplitude
  double energy_drift = 0.0;       // (max H − min H) along the orbit / E
  double symmetry_residual = 0.0;  // largest trajectory-symmetry defect / amplitude (0 without checks)
  // Floquet multipliers of the whole-space monodromy (2n; empty if not computed), sorted
  // by decreasing modulus; the 2 + 2·(continuous symmetries) closest to +1 are neutral.
  std::vector<std::complex<double>> floquet_multipliers;
  std::vector<double> floquet_moduli;
  // The non-neutral multipliers alone (those of the quotient by the flow, the energy and
  // the continuous symmetries), in the order computed.
  std::vector<std::complex<double>> nonneutral_multipliers;
  double largest_modulus = 1.0;    // among the non-neutral multipliers
  int unstable_count = 0;          // non-neutral multipliers with modulus > 1 + tolerance
  int unstable_negative_real = 0;  // of those: real and negative (period-doubling side)
  int unstable_positive_real = 0;  // of those: real and positive (branch-point side)
  bool stable = true;              // no unstable multiplier
  int multipliers_near_one = 0;    // non-neutral multipliers within partner_resolution of +1
  // Continuation data:
  int energy_direction = 1;           // sign of dE along the family's tangent (−1 after a fold)
  Eigen::VectorXd initial_positions;  // Q(0), full space
  Eigen::VectorXd initial_momenta;    // P(0), full space
  // Cost of this point:
  int newton_iterations = 0;
  int variational_integrations = 0;
  int orbit_integrations = 0;
  std::size_t gradient_evaluations = 0;     // including those of finite-difference Hessian products
  std::size_t hessian_evaluations = 0;      // analytic Hessians of a molecule's potential
  std::size_t hessian_vector_products = 0;  // analytic Hessian–vector products of a molecule's potential
  double seconds = 0.0;
};

enum class FamilyEventKind {
  fold,                 // the energy turns back along the family
  stability_lost,       // a multiplier leaves the unit circle
  stability_gained,     // all multipliers return to the unit circle
  period_doubling,      // a multiplier passes through −1
  branch_point,         // a non-neutral multiplier passes through +1
  instability_changed,  // the number of unstable multipliers changes otherwise
  resonance_encounter,  // the frequency ratio with another family passes a small integer ratio
  escape,               // continuation ended because orbits stop closing
};
const char* to_string(FamilyEventKind kind);

struct FamilyEvent {
  FamilyEventKind kind = FamilyEventKind::fold;
  int point_index = 0;  // between points point_index−1 and point_index
  double energy = 0.0;  // estimate, system units
  double energy_cm1 = 0.0;
  std::string message;
  // resonance_encounter only: the other family (index in FamiliesResult::families) and
  // the ratio ω_this : ω_other = ratio_numerator : ratio_denominator being passed.
  int partner_family = -1;
  int ratio_numerator = 0;
  int ratio_denominator = 0;
};

struct LadderLevel {
  int n = 0;
  double energy = 0.0;  // where J = (n+½)ħ, system units
  double energy_cm1 = 0.0;
  double transition_cm1 = 0.0;           // E_n − E_0
  double harmonic_transition_cm1 = 0.0;  // n·ω (harmonic)
  double action_residual_hbar = 0.0;     // |J − (n+½)ħ| / ħ actually reached
  bool refined = false;                  // located by Newton on the family (else interpolated)
};

struct ContinuationResult {
  ContinuationStatus status = ContinuationStatus::start_failed;
  std::string message;
  std::vector<OrbitPoint> points;  // ordered along the family
  std::vector<FamilyEvent> events;
  std::vector<LadderLevel> ladder;
  // Sizes of the shooting problem:
  int reduced_dimension = 0;  // m = dim of the invariant subspace
  int shift_denominator = 1;  // r: integrations cover T/r
  // Totals:
  int newton_iterations = 0;
  int variational_integrations = 0;
  int orbit_integrations = 0;
  int rejected_steps = 0;             // continuation steps retried with a smaller step
  std::size_t integration_steps = 0;  // accepted integrator steps, all integrations
  // Evaluations, the ladder's included (see OrbitPoint):
  std::size_t gradient_evaluations = 0;
  std::size_t hessian_evaluations = 0;
  std::size_t hessian_vector_products = 0;
  double seconds = 0.0;
  // Mean time of one period with whole-space variational equations (the benchmark's
  // unit of cost); 0 when none was run.
  double seconds_per_variational_period = 0.0;
  std::vector<std::string> warnings;
};

// Continues one family from its linear orbit up to options.energy_max.
// Throws Error for invalid options or an inconsistent seed (sizes, non-orthonormal basis,
// a linear mode outside the invariant subspace, r < 1).
ContinuationResult continue_family(const VibrationalSystem& system, const FamilySeed& seed,
                                   const ContinuationOptions& options);

// One orbit of a family at a given energy, Newton from a nearby point of it, with its
// analysis and its whole-space monodromy (the bifurcation search of branch_switching.hpp).
struct OrbitProbe {
  bool converged = false;
  std::string failure;
  OrbitPoint point;
  Eigen::MatrixXd monodromy;  // 2n × 2n on (Q, P); empty unless converged and compute_floquet
};

// Throws Error like continue_family (options.energy_max must be set; it sets the escape
// radius).
OrbitProbe solve_orbit_at_energy(const VibrationalSystem& system, const FamilySeed& seed,
                                 const ContinuationOptions& options, const OrbitPoint& near, double energy);

}  // namespace overtone
