#pragma once
// Double-harmonic intensities of the fundamentals: the dipole and polarizability are taken
// linear in the normal coordinates, the potential quadratic.
//
//   ∂μ/∂Q_k = P M^{-1/2} L_k                    (P = ∂μ/∂x, 3 × 3N; L_k mass-weighted mode)
//   A_k = N_A π / (3 c²) · |∂μ/∂Q_k|² / (4πε₀)   IR band intensity, km/mol
//                                               (units::km_per_mol_per_e2_per_da)
//   α'_k = ∂α/∂Q_k,  a_k = Tr(α'_k)/3,
//   γ_k² = ½[(α'xx−α'yy)² + (α'yy−α'zz)² + (α'zz−α'xx)² + 6(α'xy² + α'xz² + α'yz²)]
//   S_k = 45 a_k² + 7 γ_k²                       Raman activity, Å⁴/u
//   ρ_k = 3 γ_k² / (45 a_k² + 4 γ_k²)            depolarization ratio for plane-polarized
//                                               excitation (0 ≤ ρ ≤ 3/4)
// (D. A. Long, The Raman Effect, Wiley 2002, ch. 5, for the invariants a and γ and ρ;
// the activity 45a² + 7γ² is common practice, no source.)
//
// Degenerate sets: a single vector's intensity depends on the choice of partners, the
// set's sum does not. Every member of a set is given the set's mean (sum / size), so that
// summing over mode vectors gives the set total; ρ of a set comes from the summed
// invariants.
//
// Crawford's G sum rule (the check of the result): the mass-weighted Cartesian basis is
// the vibrations L plus the rigid-body motions R, so
//   Σ_k A_k = K [ Σ_a (1/m_a) Σ_{αβ} (P_a)²_{αβ} − |Σ_a P_a|²_F / M − Σ_α |e_α × μ₀|² / I_α ]
// with K = units::km_per_mol_per_e2_per_da, P_a the polar tensor of atom a, M the total
// mass, μ₀ the permanent dipole about the centre of mass, e_α and I_α the principal axes and
// moments (axes with I_α = 0 skipped). The second term vanishes for a neutral molecule
// (Σ_a P_a = total charge · 1); the third is the rotational correction. It holds when P
// rotates with the molecule (∂μ along a rigid rotation is the rotated permanent dipole),
// which is true of fixed charges and of any physical dipole function.
#include <Eigen/Dense>
#include <optional>
#include <string>
#include <vector>

#include "harmonic/harmonic.hpp"
#include "intensity/dipole_source.hpp"

namespace overtone {

struct HarmonicIntensityOptions {
  // Degenerate set of each mode (index = harmonic index, any ids; equal id = one set). Empty:
  // every mode is its own set.
  std::vector<int> set_of_mode;
};

struct CrawfordSum {
  bool available = false;               // the source gives the permanent dipole
  double modes_km_per_mol = 0.0;        // Σ_k A_k over the vibrations
  double atoms_km_per_mol = 0.0;        // K Σ_a tr(P_a P_aᵀ)/m_a
  double translation_km_per_mol = 0.0;  // K |Σ_a P_a|²_F / M
  double rotation_km_per_mol = 0.0;     // K Σ_α |e_α × μ₀|² / I_α
  double relative_residual = 0.0;       // |modes − (atoms − translation − rotation)| / atoms
};

struct HarmonicIntensityResult {
  std::string source;                         // DipoleSource::description()
  std::string notes;                          // DipoleSource::notes()
  Eigen::MatrixXd dipole_derivatives_normal;  // 3 × M: ∂μ/∂Q_k, e/Da^{1/2} (per mode vector)
  Eigen::VectorXd ir_km_per_mol;              // per harmonic index, set means
  bool has_raman = false;
  Eigen::MatrixXd polarizability_derivatives_normal;  // 6 × M: ∂α/∂Q_k, Å²/Da^{1/2} (when has_raman)
  Eigen::VectorXd raman_activity_a4_per_u;            // per harmonic index, set means (when has_raman)
  Eigen::VectorXd depolarization_ratio;  // per harmonic index; NaN where S vanishes (when has_raman)
  CrawfordSum crawford;
  std::vector<std::string> warnings;
};

// Throws Error when the source and the harmonic result disagree in size or
// options.set_of_mode has the wrong length.
HarmonicIntensityResult compute_harmonic_intensities(const HarmonicResult& harmonic,
                                                     const DipoleSource& source,
                                                     const HarmonicIntensityOptions& options = {});

// Both sides of Crawford's G sum rule (header comment) for the given polar tensors.
CrawfordSum crawford_sum(const HarmonicResult& harmonic, const Eigen::MatrixXd& dipole_derivatives,
                         const std::optional<Eigen::Vector3d>& dipole_e_angstrom, double modes_km_per_mol);

// The Raman invariants of one ∂α/∂Q (rows xx, yy, zz, xy, xz, yz): a² and γ².
struct RamanInvariants {
  double mean_squared = 0.0;        // a²
  double anisotropy_squared = 0.0;  // γ²
};
RamanInvariants raman_invariants(const Eigen::Matrix<double, 6, 1>& derivative);

}  // namespace overtone
