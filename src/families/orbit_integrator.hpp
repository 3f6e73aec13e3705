#pragma once
// detail: integration of one orbit of H = ½|P|² + V(Q), optionally with the variational
// equations and the action integral, for the periodic-orbit engine.
//
// The orbit is assumed to stay in span(B) (B n×m with orthonormal columns: the fixed
// space of the spatial symmetry of a family), so it is integrated in reduced coordinates.
// State variables are scaled to O(1) so that one relative tolerance fits every amplitude:
//   q = ℓ B â,   p = ω₀ ℓ B b̂,
// with ℓ a length scale (the harmonic amplitude at the current energy) and ω₀ the
// family's harmonic angular frequency. The variational equations are integrated for all
// 2c directions of span(C) × span(C) (C n×c orthonormal; C = B for Newton, C = I for
// Floquet multipliers) in the same scaling, so the returned transition matrix
//   Φ̂ = diag(1, 1/ω₀) Φ diag(1, ω₀)
// is dimensionless and independent of ℓ. The Hessian enters only as CᵀHC, symmetrized,
// which keeps the variational flow Hamiltonian even with finite-difference Hessians.
#include <Eigen/Dense>
#include <cstddef>
#include <string>
#include <vector>

#include "families/vibrational_system.hpp"

namespace overtone::detail {

struct OrbitScaling {
  double length = 1.0;             // ℓ, unit of q
  double angular_frequency = 1.0;  // ω₀, radians per time unit
};

struct IntegrationRequest {
  Eigen::VectorXd scaled_state;                        // (â, b̂), 2m
  double duration = 0.0;                               // physical time units, > 0
  const Eigen::MatrixXd* variational_basis = nullptr;  // C; null: no variational equations
  // > 0: the state at sample_count+1 equally spaced times (interpolated between the
  // integrator's steps, error far below the tolerance), and the state after every step.
  int sample_count = 0;
  // > 0: the error tolerance of this integration instead of the integrator's own (orbit
  // integrations only; Newton iterations far from convergence need less accuracy).
  double tolerance = 0.0;
  // In (0, duration): also return the state at this time (a step ends there).
  double checkpoint = 0.0;
};

struct IntegrationOutcome {
  bool ok = false;
  std::string failure;                               // why not ok (escape, step limit, non-finite state)
  Eigen::VectorXd scaled_state;                      // (â, b̂) at the end
  Eigen::VectorXd checkpoint_state;                  // (â, b̂) at the requested checkpoint
  double checkpoint_momentum_square_integral = 0.0;  // ∫|p|² dt up to the checkpoint
  Eigen::MatrixXd transition;                        // Φ̂, 2c × 2c, when requested
  double momentum_square_integral = 0.0;             // ∫|p|² dt over the duration, physical units
  std::vector<Eigen::VectorXd> samples;              // scaled states at the sample times (first = start)
  std::vector<Eigen::VectorXd> step_states;          // scaled states the integrator reached (first = start)
  std::size_t steps = 0;
  std::size_t rejected_steps = 0;
  double seconds = 0.0;
};

struct IntegrationCounters {
  std::size_t orbit_integrations = 0;        // without variational equations
  std::size_t variational_integrations = 0;  // with variational equations
  std::size_t steps = 0;
  std::size_t rejected_steps = 0;
  // Time spent in integrations with whole-space variational equations and the number
  // of periods they covered: the benchmark's unit of cost is their ratio.
  double full_variational_seconds = 0.0;
  double full_variational_periods = 0.0;
};

// The variational equations along an orbit that is already known at equally spaced
// samples: the projected Hessian CᵀH(q)C (symmetrized) is evaluated at every
// node_stride-th sample covering [0, duration] (with a margin; the sample list is
// periodic) and interpolated by 8-point Lagrange polynomials, and only the linear
// equations X̂' = ω₀Ŷ, Ŷ' = −(CᵀHC/ω₀)X̂ are integrated (same scaling as OrbitIntegrator).
// This needs (duration/spacing)/node_stride Hessian products instead of one per stage of
// every integrator step. Returns false (and leaves transition empty) when a
// leave-one-out test of the interpolation errs by more than interpolation_tolerance
// relative to the largest Hessian entry, or when the samples do not cover the margin;
// the caller then integrates directly.
struct InterpolatedTransitionRequest {
  const std::vector<Eigen::VectorXd>* positions = nullptr;  // q at t_j = j·spacing, j = 0..N−1, periodic in N
  double spacing = 0.0;
  double duration = 0.0;
  int node_stride = 1;
  const Eigen::MatrixXd* variational_basis = nullptr;  // C, n × c
  double angular_frequency = 1.0;                      // ω₀ of the scaling
  double tolerance = 1e-9;                             // integrator, per step
  double interpolation_tolerance = 1e-7;
};
bool interpolated_transition(const VibrationalSystem& system, const InterpolatedTransitionRequest& request,
                             Eigen::MatrixXd& transition, std::size_t& steps);

class OrbitIntegrator {
 public:
  // tolerance: relative and absolute error per step of the controlled
  // Runge–Kutta–Fehlberg 7(8) stepper on the O(1) scaled state; variational_tolerance the
  // same for integrations with variational equations (their results feed Jacobians and
  // Floquet multipliers, which need far less accuracy than the orbit itself).
  // escape_radius: |q| (unit of q) beyond which the orbit counts as escaped.
  OrbitIntegrator(const VibrationalSystem& system, Eigen::MatrixXd basis, double tolerance,
                  double variational_tolerance, double escape_radius, std::size_t max_steps);

  IntegrationOutcome integrate(const IntegrationRequest& request, const OrbitScaling& scaling);

  // Time derivative of the scaled state (â, b̂) at a scaled state.
  Eigen::VectorXd scaled_velocity(const Eigen::VectorXd& scaled_state, const OrbitScaling& scaling) const;
  // Full-space coordinates from a scaled state.
  Eigen::VectorXd positions(const Eigen::VectorXd& scaled_state, const OrbitScaling& scaling) const;
  Eigen::VectorXd momenta(const Eigen::VectorXd& scaled_state, const OrbitScaling& scaling) const;

  const Eigen::MatrixXd& basis() const { return basis_; }
  int reduced_dimension() const { return static_cast<int>(basis_.cols()); }
  IntegrationCounters& counters() { return counters_; }
  const IntegrationCounters& counters() const { return counters_; }
  void set_full_period(double period) { period_ = period; }

 private:
  const VibrationalSystem& system_;
  Eigen::MatrixXd basis_;
  double tolerance_;
  double variational_tolerance_;
  double escape_radius_;
  std::size_t max_steps_;
  double step_hint_ = 0.0;              // last accepted step / duration, orbit only
  double variational_step_hint_ = 0.0;  // the same with variational equations
  double period_ = 0.0;
  IntegrationCounters counters_;
};

}  // namespace overtone::detail
