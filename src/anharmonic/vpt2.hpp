#pragma once
// Second-order vibrational perturbation theory (VPT2) on the quartic force field of
// force_constants.hpp, with resonance detection, deperturbation and resonance polyads.
//
// Vibrational term values (relative to the ground state), component form:
//   E(n) − E(0) = Σ_i ω_i n_i + Σ_{i≤j} x_ij [(n_i + ½)(n_j + ½) − ¼]
// so ν_i = ω_i + 2x_ii + ½ Σ_{j≠i} x_ij,  2ν_i = 2ω_i + 6x_ii + Σ_{j≠i} x_ij,
//    ν_i + ν_j = ω_i + ω_j + 2x_ii + 2x_jj + 2x_ij + ½ Σ_{k≠i,j} (x_ik + x_jk).
// Anharmonicity constants (Nielsen, Rev. Mod. Phys. 23, 90 (1951); Mills, in Molecular
// Spectroscopy: Modern Research (1972)), written in partial fractions so that each
// resonant denominator can be dropped on its own (derivation: docs/anharmonic.md):
//   x_ii = φ_iiii/16 + Σ_k φ_iik² [−1/(8ω_k) + 1/(32(2ω_i − ω_k)) − 1/(32(2ω_i + ω_k))]
//   x_ij = φ_iijj/4 − Σ_k φ_iik φ_jjk/(4ω_k)
//          + Σ_k φ_ijk²/8 [−1/(ω_i+ω_j+ω_k) + 1/(ω_i+ω_j−ω_k) − 1/(ω_i+ω_k−ω_j) − 1/(ω_j+ω_k−ω_i)]
//          + x_ij(Coriolis)
//   x_ij(Coriolis) = Σ_α B_α (ζ^α_ij)² (ω_i/ω_j + ω_j/ω_i)   (i, j in different degenerate sets)
// with ζ^α_ij the Coriolis coupling constants from the mass-weighted modes L in the
// principal axes at the equilibrium geometry and B_α = ħ²/(2I_α) the equilibrium rotational
// constants (axes with a vanishing moment, the axis of a linear molecule, are skipped).
//
// Resonances (all indices are degenerate sets; ω of a set is its harmonic wavenumber):
//   Fermi type 1        2ω_i ≈ ω_j       coupling ⟨2_i|H|1_j⟩ = φ_iij/4
//   Fermi type 2        ω_i + ω_j ≈ ω_k  coupling ⟨1_i 1_j|H|1_k⟩ = φ_ijk/(2√2)
//   Darling–Dennison    2ω_i ≈ 2ω_j      coupling ⟨2_i|H_eff|2_j⟩ (second order)
// For degenerate sets the coupling W is the largest singular value of the coupling block
// between the two zeroth-order manifolds (which reduces to the above for nondegenerate
// ones). Fermi resonances are flagged when |Δ| ≤ fermi_gap_cm1, W⁴/|Δ|³ ≥
// fermi_criterion_cm1 (Martin, Lee, Taylor, François, J. Chem. Phys. 103, 2589 (1995)) and
// symmetry allows them (the species of the upper state occurs in the symmetric square
// or the product of the lower ones: the rules of ModeSymmetry, applied when the force
// constants used the group). Flagged Fermi terms are dropped from x (the
// deperturbed constants); the states they couple, closed under all flagged couplings, form
// a polyad whose effective Hamiltonian (diagonal from the deperturbed x, couplings from
// effective_hamiltonian.hpp) is diagonalized.
//
// Degenerate modes: each degenerate set is handled through its components. A level of
// the line list is a zeroth-order manifold (quanta per set); its component states are
// coupled by the second-order effective Hamiltonian and diagonalized, which gives the
// vibrational angular momentum splittings (e.g. l = 0 and |l| = 2 of a doubly degenerate
// overtone) as separate sublevels. For doubly degenerate sets whose overtone splits into a
// single and a double sublevel, x_tt and g_tt of G = ω(v+1) + x_tt(v+1)² + g_tt l² are
// reported as well. Approximations: Coriolis terms enter only as x_ij between modes of
// different sets (the ζ within a degenerate set belongs to the rotational l-coupling), and
// are added to the diagonal of the component basis.
#include <Eigen/Dense>
#include <functional>
#include <limits>
#include <string>
#include <vector>

#include "anharmonic/force_constants.hpp"
#include "core/progress.hpp"
#include "harmonic/harmonic.hpp"

namespace overtone {

struct Vpt2Options {
  // Fermi resonance candidates: |2ω_i − ω_j| or |ω_i + ω_j − ω_k| at most this, cm⁻¹
  // (Martin et al. 1995).
  double fermi_gap_cm1 = 200.0;
  // Flag a Fermi candidate when W⁴/|Δ|³ (the error of second-order perturbation theory for
  // a two-level system) reaches this, cm⁻¹ (Martin et al. 1995).
  double fermi_criterion_cm1 = 1.0;
  // Darling–Dennison candidates: |2ω_i − 2ω_j| at most this, cm⁻¹ (common practice, no source).
  double darling_dennison_gap_cm1 = 100.0;
  // Flag a Darling–Dennison candidate when its coupling |W| reaches this, cm⁻¹ (common
  // practice, no source).
  double darling_dennison_coupling_cm1 = 10.0;
  // Flag only symmetry-allowed resonances (no effect without a point group).
  bool require_symmetry_allowed = true;
  // false: plain VPT2 (nothing deperturbed, no polyads; candidates are still listed).
  bool treat_resonances = true;
  // Add the Coriolis (rotation–vibration) term to x.
  bool include_coriolis = true;
  // Polyad closure stops at states with more quanta in total than this.
  int polyad_max_quanta = 4;
  // The line list holds the binary combination levels ν_i + ν_j. false: fundamentals and
  // overtones only, and only the polyads that hold one of them are diagonalized. The
  // fundamentals' and overtones' values do not change (a polyad is explored from its
  // first line-list level, and those come first), but the work falls from about m²/2
  // explored levels to 2m: what a screen that stores no line list needs.
  bool include_combination_levels = true;
  // A polyad (a connected component of the graph of flagged couplings between manifolds,
  // explored from a line-list level) holds at most this many component states: a larger
  // component keeps the whole layers of graph distance from that level that fit, and is
  // reported as cut. Bounds the dense diagonalization (time ∝ states³, memory ∝ states²).
  int polyad_max_states = 200;
  // Eigenvalues closer than this (cm⁻¹) form one degenerate level.
  double level_degeneracy_tolerance_cm1 = 0.01;
  // A mode whose anharmonic ratio (PerturbationCheck) reaches this is flagged: at the
  // turning point of its fundamental an anharmonic term is as large as the harmonic one,
  // where a perturbation series in those terms means nothing (common practice, no source).
  double perturbation_ratio_limit = 1.0;
  // Reduced-dimensional VPT2: modes (whole degenerate sets) below this harmonic wavenumber
  // (cm⁻¹) are dropped from the force field, i.e. every constant with one of their indices
  // and their Coriolis terms is removed; the line list, the resonances and x cover the
  // other modes only (rows and columns of the excluded modes are 0). 0: none excluded.
  double exclude_below_cm1 = 0.0;
  // Told as the stage moves on (stage "VPT2": the constants and resonance candidates, then
  // done of total resonance groups diagonalized).
  ProgressCallback progress;

  void validate() const;  // throws Error naming the field that is out of range
};

enum class Vpt2Status { ok, polyad_truncated };
std::string to_string(Vpt2Status status);

enum class ResonanceKind { fermi_1, fermi_2, darling_dennison };
// Output codes that say which levels meet: "overtone-fundamental" (Fermi type 1, 2ν_i ≈ ν_j),
// "combination-fundamental" (Fermi type 2, ν_i + ν_j ≈ ν_k), "overtone-overtone"
// (Darling–Dennison, 2ν_i ≈ 2ν_j).
std::string to_string(ResonanceKind kind);

enum class LevelKind { fundamental, overtone, combination, other };
std::string to_string(LevelKind kind);  // "fundamental", "overtone", "combination", "other"

// One degenerate set of modes (a single mode when nondegenerate).
struct DegenerateSet {
  std::vector<int> modes;     // harmonic indices (ascending wavenumber order)
  double harmonic_cm1 = 0.0;  // ω of the set (mean of its modes)
  std::string species;        // "" without a character table
};

struct Resonance {
  ResonanceKind kind = ResonanceKind::fermi_1;
  // Sets involved: fermi-1 {i, j} for 2ν_i ↔ ν_j; fermi-2 {i, j, k} for ν_i + ν_j ↔ ν_k;
  // darling-dennison {i, j} for 2ν_i ↔ 2ν_j. Indices into Vpt2Result::sets.
  std::vector<int> sets;
  double gap_cm1 = 0.0;          // harmonic: 2ω_i − ω_j, ω_i + ω_j − ω_k, 2ω_i − 2ω_j
  double coupling_cm1 = 0.0;     // W (≥ 0)
  double criterion_value = 0.0;  // Fermi: W⁴/|Δ|³ in cm⁻¹; Darling–Dennison: W in cm⁻¹
  bool symmetry_allowed = true;
  bool flagged = false;  // treated (deperturbed and diagonalized in a polyad)
};

// The quanta of a manifold as its nonzero (set, quanta) entries in ascending set order: a
// polyad holds many manifolds of a few quanta each, whatever the number of modes.
using SparseQuanta = std::vector<std::pair<int, int>>;
SparseQuanta sparse_quanta(const std::vector<int>& set_quanta);
std::vector<int> dense_quanta(const SparseQuanta& quanta, std::size_t set_count);

// Weight of one zeroth-order (deperturbed) level in a resonance-corrected state.
struct LevelComponent {
  SparseQuanta quanta;     // of the manifold
  int sublevel = 0;        // which sublevel of that manifold (see VibrationalLevel)
  int sublevel_count = 1;  // sublevels of that manifold
  std::string species;     // of that sublevel; "" without a character table
  // Distinguishes the sublevel within its manifold: "" when there is only one, else the
  // species, with "#k" appended when that species occurs more than once, or just "k".
  std::string tag;
  // Squared coefficient, summed over degenerate partners. Components of weight 1e-6 or
  // more are listed (a sublevel below that takes no part in the resonance), so the listed
  // weights sum to 1 within 1e-6 times the polyad's sublevels.
  double weight = 0.0;
};

struct VibrationalLevel {
  LevelKind kind = LevelKind::other;
  std::vector<int> set_quanta;  // quanta per set (index = set)
  int sublevel = 0;             // 0, 1, … by ascending deperturbed energy within the manifold
  int sublevel_count = 1;       // sublevels of this manifold (> 1 for split degenerate levels)
  int degeneracy = 1;
  std::string species;          // upper-state species; "" without a character table
  bool activity_known = false;  // IR/Raman activity needs the character table
  bool ir_active = false;
  bool raman_active = false;
  double harmonic_cm1 = 0.0;    // Σ ω v
  double anharmonic_cm1 = 0.0;  // VPT2, deperturbed where a resonance is flagged
  // Position after diagonalizing the resonance polyad; NaN when no flagged resonance
  // touches this level.
  double resonance_corrected_cm1 = std::numeric_limits<double>::quiet_NaN();
  int polyad = -1;                     // index into Vpt2Result::polyads, −1 if none
  std::vector<int> partners;           // other levels (indices into Vpt2Result::levels) in the polyad
  std::vector<LevelComponent> mixing;  // composition of the resonance-corrected state
  bool in_polyad() const { return polyad >= 0; }
};

struct Polyad {
  std::vector<SparseQuanta> manifolds;  // the zeroth-order levels coupled
  std::vector<int> levels;              // line-list levels it contains
  std::vector<int> resonances;          // indices into Vpt2Result::resonances
  int state_count = 0;                  // component states diagonalized
  bool truncated = false;               // closure stopped by a limit (one of the two below)
  bool reached_quanta_limit = false;    // a flagged coupling leads beyond polyad_max_quanta
  bool cut_at_state_limit = false;      // the component was cut at polyad_max_states
};

// How far the force field along one degenerate set is from harmonic where its fundamental
// lives. In dimensionless normal coordinates each anharmonic term is compared with the
// harmonic term ½ω_i q_i² at the classical turning point of v_i = 1 (q_i² = 3), the other
// coordinate of the term at its v = 0 turning point (q_j² = 1):
//   φ_iii q_i³/6 → √3|φ_iii|/(3ω_i),   ½φ_iij q_i² q_j → |φ_iij|/ω_i,
//   φ_iiii q_i⁴/24 → |φ_iiii|/(4ω_i),  ¼φ_iijj q_i² q_j² → |φ_iijj|/(2ω_i).
// The anharmonic ratio is the largest of these (over the modes of the set).
struct PerturbationCheck {
  int set = 0;
  double harmonic_cm1 = 0.0;
  double anharmonic_ratio = 0.0;
  std::vector<int> largest_term;     // modes (harmonic indices) of the term that gives the ratio
  bool beyond_perturbation = false;  // ratio ≥ Vpt2Options::perturbation_ratio_limit
  bool excluded = false;             // below Vpt2Options::exclude_below_cm1: not treated
};

// x_tt and g_tt of a doubly degenerate set (G = ω(v+1) + x_tt(v+1)² + g_tt l² + …).
struct DegenerateSetConstants {
  int set = 0;
  double x_cm1 = 0.0;
  double g_cm1 = 0.0;
};

struct Vpt2Result {
  Vpt2Status status = Vpt2Status::ok;
  std::string message;
  std::vector<std::string> warnings;

  Eigen::VectorXd harmonic_cm1;     // ω per mode (ascending, harmonic order)
  std::vector<DegenerateSet> sets;  // degenerate sets, in order of their first mode
  std::vector<int> set_of_mode;     // set index per mode
  std::string point_group;

  // Anharmonicity constants per mode (component form, symmetric M × M), cm⁻¹.
  Eigen::MatrixXd x_cm1;              // total = vibrational + Coriolis
  Eigen::MatrixXd x_vibrational_cm1;  // deperturbed (flagged resonant terms removed)
  Eigen::MatrixXd x_coriolis_cm1;
  Eigen::MatrixXd x_vibrational_plain_cm1;  // nothing removed (plain VPT2)
  std::vector<DegenerateSetConstants> degenerate_constants;

  Eigen::Vector3d rotational_constants_cm1 =
      Eigen::Vector3d::Zero();                 // B_α, ascending moment; 0 = skipped axis
  std::vector<Eigen::MatrixXd> coriolis_zeta;  // ζ^α (M × M), α over the principal axes

  // One per set, from the full force field (also when modes are excluded).
  std::vector<PerturbationCheck> perturbation_checks;
  double perturbation_ratio_limit = 1.0;  // as asked (Vpt2Options)
  double exclude_below_cm1 = 0.0;         // as asked (Vpt2Options); 0: nothing excluded

  std::vector<Resonance> resonances;  // all candidates within the gap thresholds
  std::vector<Polyad> polyads;
  // Fundamentals, overtones, binary combinations (unless include_combination_levels is false).
  std::vector<VibrationalLevel> levels;

  bool ok() const { return status == Vpt2Status::ok; }
};

// VPT2 on the force constants (which carry the mode symmetry) at the harmonic result they
// were computed from. Throws Error for invalid options (also an exclude_below_cm1 that
// leaves no mode), a force-constant result that is not ok, or sizes that disagree.
Vpt2Result run_vpt2(const ForceConstantResult& force_constants, const HarmonicResult& harmonic,
                    const Vpt2Options& options = {});

namespace detail {

// The anharmonic ratio of every set (PerturbationCheck), flagged against ratio_limit.
std::vector<PerturbationCheck> perturbation_checks(const ForceConstantTensors& constants,
                                                   const Eigen::VectorXd& omega,
                                                   const std::vector<DegenerateSet>& sets,
                                                   double ratio_limit);

// The constants without any that has an index among the excluded modes.
ForceConstantTensors without_modes(const ForceConstantTensors& constants, const std::vector<bool>& excluded);

// Vibrational anharmonicity constants x (component form) from ω and φ; resonant(a, b, c)
// says whether the denominator ω_a + ω_b − ω_c is to be dropped (a deperturbed term); an
// empty function drops nothing.
Eigen::MatrixXd anharmonicity_constants(const ForceConstantTensors& constants, const Eigen::VectorXd& omega,
                                        const std::function<bool(int, int, int)>& resonant = {});

// Coriolis coupling constants ζ^α (α over principal axes, ascending moment) and the
// equilibrium rotational constants (cm⁻¹; 0 for an axis with vanishing moment).
void coriolis_constants(const HarmonicResult& harmonic, std::vector<Eigen::MatrixXd>& zeta,
                        Eigen::Vector3d& rotational_constants_cm1);

// E(n) − E(0) from the component-form x (see the header comment).
double term_value(const Eigen::VectorXd& omega, const Eigen::MatrixXd& x, const std::vector<int>& quanta);

}  // namespace detail

}  // namespace overtone
