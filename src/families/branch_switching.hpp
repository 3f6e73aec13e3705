#pragma once
// Families born at bifurcations of other families (branch switching).
//
// Where a non-neutral Floquet multiplier of a family passes through −1 (period doubling)
// or through +1 with a symmetry that it breaks (a symmetry-breaking branch point), a new
// family of periodic orbits branches off:
//  * the bifurcation energy is located on the parent by the secant method, safeguarded by
//    bisection, on the test function τ(E) = Re(μ + 1/μ) ± 2 of the non-neutral
//    multiplier μ closest to ∓1 (τ changes sign where the pair μ, 1/μ leaves the unit
//    circle through ∓1);
//  * the new branch's direction is a kernel vector v of M − μ*·I there (M the parent's
//    monodromy, μ* = ∓1). For a doubling v spans the part of the kernel of M(2T) − I
//    = M² − I (the monodromy over twice the period) that is not in the kernel of M − I,
//    so the new orbits have twice the parent's period. A kernel of several dimensions (a
//    degenerate pair of modes) is cut down by symmetry: the vectors that an operation
//    keeps, or reverses, are taken first, so the new family has the largest isotropy;
//  * the new family's symmetry: the operations that fix the parent's orbit and keep v
//    (same time), and for a doubling those that reverse v (half the new period later);
//    its copies are the parent's times the index of that subgroup in the parent's;
//  * it is continued like any family (FamilySeed::branch: the first point at a fixed
//    distance along v, energy free, so that Newton cannot fall back onto the parent).
#include <Eigen/Dense>
#include <optional>
#include <string>
#include <vector>

#include "families/family_types.hpp"
#include "families/periodic_orbits.hpp"

namespace overtone {

struct BranchSwitchingOptions {
  bool enabled = true;
  // Generations followed: 1 = families born of the families from the minimum; 2 also
  // those born of the born families, and so on.
  int depth = 1;
  // Bifurcation search: stop when |τ| is below test_tolerance (τ is linear in the
  // distance to the bifurcation, with a slope of about the multiplier's rate, so this
  // places it to ~1e-6 relative or better), when the bracket is below energy_resolution
  // of the energy between the two backbone points around the event, or after max_probes
  // orbits.
  double test_tolerance = 1e-9;
  double energy_resolution = 1e-7;
  int max_probes = 40;
  // A singular value of M − μ*·I below this fraction of the largest counts as zero
  // (the bifurcation is located to far better; a Jordan block leaves one small value
  // of the order of the distance to it).
  double kernel_tolerance = 1e-4;
  double first_step = 0.05;  // BranchStart::step
  int max_births_per_family = 4;

  void validate() const;  // throws Error naming the field that is out of range
};

// The parent's orbit at a located bifurcation.
struct BirthSite {
  FamilyEventKind kind = FamilyEventKind::period_doubling;  // or branch_point
  OrbitPoint point;                                         // at the bifurcation energy
  Eigen::MatrixXd monodromy;                                // 2n × 2n on (Q, P)
  double test_value = 0.0;                                  // τ there
  int probes = 0;                                           // orbits solved to find it
};

// τ of a point for a kind of event (period_doubling: μ → −1, branch_point: +1); NaN
// without non-neutral multipliers.
double bifurcation_test_value(const OrbitPoint& point, FamilyEventKind kind);

// Locates the bifurcation of `event` (period_doubling or branch_point) between the
// backbone points around it. Empty (reason in `failure`) when the test function does not
// change sign there or an orbit fails to converge.
std::optional<BirthSite> locate_bifurcation(const VibrationalSystem& system, const FamilySeed& parent_seed,
                                            const ContinuationOptions& continuation,
                                            const ContinuationResult& backbone, const FamilyEvent& event,
                                            const BranchSwitchingOptions& options, std::string& failure);

// The type of the family born at `site` of `parent` (symmetry, copies, description, and a
// seed with FamilySeed::branch set). Empty (reason in `failure`) when the kernel is empty
// or, at a branch point, no symmetry of the parent is broken (then +1 is a fold of
// families, not a birth).
std::optional<FamilyType> born_family_type(const FamilyType& parent, int parent_number,
                                           const std::vector<ModeBlock>& blocks,
                                           const CoordinateSymmetry& symmetry, const BirthSite& site,
                                           const UnitConventions& units,
                                           const BranchSwitchingOptions& options, std::string& failure);

}  // namespace overtone
