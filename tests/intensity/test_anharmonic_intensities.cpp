// Anharmonic intensities: cubic matrix elements against the operator algebra in a truncated
// basis, first-order transition moments against exact diagonalization of a weakly
// anharmonic model, and the line list of the shipped molecules (forbidden levels dark, the
// Fermi dyad of CO₂ sharing its Raman activity coherently).
#include <gtest/gtest.h>

#include <random>

#include "intensity/anharmonic_intensities.hpp"
#include "molecule/read_molecule.hpp"
#include "pipeline/analysis.hpp"
#include "pipeline/intensities.hpp"
#include "potential/make_potential.hpp"

namespace overtone {
namespace {

// Matrix products of truncated operators reproduce the exact elements to round-off.
constexpr double element_tolerance = 1e-10;
// Exact moments of H₀ + sV₃ divided by s agree with the first-order ones up to O(s·φ/Δω):
// with s = 1e-4 and φ/Δω ≲ 0.5, a relative 1e-3 is ample.
constexpr double first_order_tolerance = 1e-3;
constexpr double perturbation_scale = 1e-4;

// Kronecker product of per-mode operators (mode 0 slowest).
Eigen::MatrixXd kron(const Eigen::MatrixXd& a, const Eigen::MatrixXd& b) {
  Eigen::MatrixXd k(a.rows() * b.rows(), a.cols() * b.cols());
  for (Eigen::Index i = 0; i < a.rows(); ++i)
    for (Eigen::Index j = 0; j < a.cols(); ++j)
      k.block(i * b.rows(), j * b.cols(), b.rows(), b.cols()) = a(i, j) * b;
  return k;
}

// q = (a + a†)/√2 on n = 0..size−1.
Eigen::MatrixXd position_operator(int size) {
  Eigen::MatrixXd q = Eigen::MatrixXd::Zero(size, size);
  for (int n = 0; n + 1 < size; ++n) q(n, n + 1) = q(n + 1, n) = std::sqrt((n + 1) / 2.0);
  return q;
}

std::vector<Eigen::MatrixXd> mode_operators(int modes, int size) {
  std::vector<Eigen::MatrixXd> ops;
  for (int k = 0; k < modes; ++k) {
    Eigen::MatrixXd op = Eigen::MatrixXd::Identity(1, 1);
    for (int j = 0; j < modes; ++j)
      op = kron(op, j == k ? position_operator(size) : Eigen::MatrixXd::Identity(size, size));
    ops.push_back(op);
  }
  return ops;
}

Eigen::MatrixXd cubic_operator(const ForceConstantTensors& phi, const std::vector<Eigen::MatrixXd>& q) {
  const int modes = phi.mode_count();
  Eigen::MatrixXd v = Eigen::MatrixXd::Zero(q[0].rows(), q[0].cols());
  for (int i = 0; i < modes; ++i)
    for (int j = 0; j < modes; ++j)
      for (int k = 0; k < modes; ++k) v += phi.cubic(i, j, k) / 6.0 * q[i] * q[j] * q[k];
  return v;
}

int basis_index(const std::vector<int>& n, int size) {
  int index = 0;
  for (const int quanta : n) index = index * size + quanta;
  return index;
}

ForceConstantTensors random_cubic(int modes, unsigned seed) {
  std::mt19937 random(seed);
  std::uniform_real_distribution<double> value(-150.0, 150.0);
  ForceConstantTensors phi(modes);
  for (int i = 0; i < modes; ++i)
    for (int j = i; j < modes; ++j)
      for (int k = j; k < modes; ++k) phi.set_cubic(i, j, k, value(random));
  return phi;
}

TEST(CubicMatrixElements, AgreeWithTheOperatorAlgebra) {
  // V₃ = (1/6) Σ φ_ijk q_i q_j q_k built from truncated matrices (closed-form q elements):
  // elements between states of at most 2 quanta per mode need intermediates up to 5 quanta.
  const int modes = 3, size = 6;
  const ForceConstantTensors phi = random_cubic(modes, 7u);
  const Eigen::MatrixXd v = cubic_operator(phi, mode_operators(modes, size));
  std::vector<std::vector<int>> states;
  for (int a = 0; a <= 2; ++a)
    for (int b = 0; b <= 2; ++b)
      for (int c = 0; c <= 2; ++c) states.push_back({a, b, c});
  for (const auto& m : states)
    for (const auto& n : states)
      EXPECT_NEAR(detail::cubic_matrix_element(phi, m, n), v(basis_index(m, size), basis_index(n, size)),
                  element_tolerance);
}

TEST(TransitionMoments, FirstOrderMomentsMatchExactDiagonalization) {
  // H = Σ ω(n + ½) + s V₃ diagonalized in a product basis; the eigenstates connected to
  // |2,0⟩, |1,1⟩, |0,2⟩ give ⟨ψ₀|Σ μ_k q_k|ψ_f⟩ = s M_f + O(s²) with M_f the first-order
  // formula (anharmonic_intensities.hpp; the linear dipole has no electrical term).
  const int modes = 2, size = 10;
  const Eigen::Vector2d omega(1000.0, 1650.0);
  const ForceConstantTensors phi = random_cubic(modes, 11u);
  Eigen::MatrixXd mu(3, 2);
  mu << 0.3, 0.0, 0.0, -0.2, 0.1, 0.05;
  const auto q = mode_operators(modes, size);
  Eigen::MatrixXd h = perturbation_scale * cubic_operator(phi, q);
  for (int a = 0; a < size; ++a)
    for (int b = 0; b < size; ++b)
      h(basis_index({a, b}, size), basis_index({a, b}, size)) += omega[0] * (a + 0.5) + omega[1] * (b + 0.5);
  const Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> solver(h);
  auto eigenstate = [&](const std::vector<int>& n) {
    Eigen::Index best = 0;
    solver.eigenvectors().row(basis_index(n, size)).cwiseAbs().maxCoeff(&best);
    Eigen::VectorXd v = solver.eigenvectors().col(best);
    return v[basis_index(n, size)] < 0.0 ? Eigen::VectorXd(-v) : v;
  };
  const Eigen::VectorXd ground = eigenstate({0, 0});
  for (const std::vector<int>& f : {std::vector<int>{2, 0}, {1, 1}, {0, 2}}) {
    const Eigen::VectorXd final_state = eigenstate(f);
    Eigen::Vector3d exact;
    for (int r = 0; r < 3; ++r)
      exact[r] = ground.dot((mu(r, 0) * q[0] + mu(r, 1) * q[1]) * final_state) / perturbation_scale;
    const Eigen::VectorXd first_order = detail::two_quantum_transition_moment(phi, omega, mu, f);
    EXPECT_LT((exact - first_order).norm(), first_order_tolerance * first_order.norm()) << f[0] << f[1];
    EXPECT_GT(first_order.norm(), 0.0);
  }
}

struct AnalysedLines {
  AnalysisResult analysis;
  AnharmonicResult anharmonic;
  IntensityResults intensities;
};

AnalysedLines analysed(const std::string& name, const std::string& response = "") {
  const std::string dir = OVERTONE_SOURCE_DIR;
  const Molecule molecule = read_molecule(dir + "/molecules/" + name + ".xyz").molecule;
  const auto potential = make_potential(dir + "/potentials/" + name + ".toml", molecule);
  AnalysedLines run;
  run.analysis = analyze_molecule(molecule, *potential);
  run.anharmonic = analyze_anharmonic(run.analysis, *potential);
  const auto source = dipole_source_for(*potential, dir + "/potentials/" + name + ".toml",
                                        run.analysis.molecule, response.empty() ? "" : dir + "/" + response);
  run.intensities = analyze_intensities(run.analysis, &run.anharmonic, *source);
  return run;
}

TEST(LineListIntensities, LevelsOfInactiveSpeciesAreDarkAndActiveOvertonesAreNot) {
  // Every level of an IR-inactive species (character table) has zero intensity to round-off;
  // in water every level is IR-active (C2v: A1, B2) and mechanical anharmonicity gives the
  // overtones and combinations some intensity.
  constexpr double dark_fraction = 1e-9;  // round-off of symmetrized modes, as for fundamentals
  for (const std::string name : {"carbon-dioxide", "water", "ammonia"}) {
    const AnalysedLines run = analysed(name);
    const Vpt2Result& vpt2 = run.anharmonic.vpt2;
    const auto& ir = run.intensities.levels->ir_km_per_mol;
    double strongest = 0.0;
    for (const auto& value : ir) strongest = std::max(strongest, value.value_or(0.0));
    int bright_overtones = 0;
    for (std::size_t i = 0; i < vpt2.levels.size(); ++i) {
      const VibrationalLevel& level = vpt2.levels[i];
      if (!ir[i]) continue;
      if (level.activity_known && !level.ir_active) {
        EXPECT_LT(*ir[i], dark_fraction * strongest) << name << " " << i;
      }
      if (level.kind != LevelKind::fundamental && level.ir_active && *ir[i] > dark_fraction * strongest)
        ++bright_overtones;
    }
    EXPECT_GT(bright_overtones, 0) << name;
  }
}

TEST(LineListIntensities, CarbonDioxideFermiDyadSharesRamanActivityCoherently) {
  // The dyad members are ν1 (single state) and the l = 0 combination of 2ν2: the coherent
  // two-state treatment applies (no warning of mixing by weight for that polyad). Their
  // activities sum to ν1's plus the small first-order activity of 2ν2 (l = 0), which has no
  // resonant term: within 1 % of ν1's, and each member gets a good share (mixing weights
  // 0.4–0.6 for CO₂, docs/anharmonic.md).
  const AnalysedLines run = analysed("carbon-dioxide", "tests/data/intensity/co2-model-response.toml");
  const Vpt2Result& vpt2 = run.anharmonic.vpt2;
  double symmetric_stretch = 0.0;
  for (const ModeLabel& label : run.analysis.modes)
    if (label.species == "Sigma_g+")
      symmetric_stretch = run.intensities.harmonic.raman_activity_a4_per_u[label.harmonic_index];
  double sum = 0.0;
  int members = 0, dyad = -1;
  for (std::size_t i = 0; i < vpt2.levels.size(); ++i) {
    const auto& raman = run.intensities.levels->raman_activity_a4_per_u[i];
    if (!vpt2.levels[i].in_polyad() || vpt2.levels[i].species != "Sigma_g+" || !raman) continue;
    if (vpt2.levels[i].set_quanta != std::vector<int>{2, 0, 0} &&
        vpt2.levels[i].set_quanta != std::vector<int>{0, 1, 0})
      continue;
    EXPECT_GT(*raman, 0.3 * symmetric_stretch);
    dyad = vpt2.levels[i].polyad + 1;
    sum += *raman;
    ++members;
  }
  EXPECT_EQ(members, 2);
  EXPECT_NEAR(sum / symmetric_stretch, 1.0, 0.01);
  const std::string dyad_name = "polyad " + std::to_string(dyad) + ":";
  for (const std::string& warning : run.intensities.levels->warnings)
    EXPECT_EQ(warning.find(dyad_name), std::string::npos) << warning;
}

}  // namespace
}  // namespace overtone
