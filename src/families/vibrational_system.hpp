#pragma once
// The one interface through which the periodic-orbit engine sees a vibrating system.
//
// Contract: the Hamiltonian is H(Q, P) = ½|P|² + V(Q) in mass-weighted normal
// coordinates Q of dimension n = dimension(), with the equilibrium at Q = 0,
// V(0) = 0, ∇V(0) = 0 and Hessian diag(ω_k²) there, ω_k = harmonic_angular_frequencies()(k).
// Units are the system's own and must be consistent: Q in length·mass^½, energy in
// energy units, time in sqrt(mass·length²/energy), so ω is in radians per time unit.
// Molecules use Å·Da^½, kcal/mol and the internal time unit of core/units.hpp; model
// systems may use any consistent set and say so in units().
//
// Model systems (model_systems.hpp) and molecules (molecular_system.hpp) implement the
// same interface, so the tests of the engine on closed-form models exercise the code
// path used for molecules.
#include <Eigen/Dense>
#include <cstddef>
#include <limits>
#include <string>
#include <vector>

namespace overtone {

// Conversion factors from a system's own units to the units reports use.
struct UnitConventions {
  double cm1_per_energy = 1.0;             // energy unit → cm⁻¹
  double cm1_per_angular_frequency = 1.0;  // angular frequency (rad per time unit) → wavenumber, cm⁻¹
  double fs_per_time = 1.0;                // time unit → fs
  double hbar = 1.0;                       // ħ in energy·time units (semiclassical quantization)
  std::string name = "model units";        // says what the converted numbers mean for a model
  // Unit of the converted energies in messages and reports: "cm-1" for molecules; for a
  // model whose factors are 1, its own energy unit.
  std::string energy_label = "energy units";
};

// The molecular internal units of core/units.hpp: kcal/mol, Å·Da^½, sqrt(Da Å²/(kcal/mol)).
UnitConventions molecular_unit_conventions();

// Counters of the expensive calls a system received.
struct SystemEvaluationCounts {
  std::size_t potentials = 0;
  std::size_t gradients = 0;           // calls of gradient(), including those made by finite differences
  std::size_t hessian_directions = 0;  // directions passed to hessian_times()
  // Molecules: what the potential was asked for behind hessian_times() (finite
  // differences count as gradients above).
  std::size_t hessians = 0;                 // analytic Hessians
  std::size_t hessian_vector_products = 0;  // analytic Hessian–vector products
  SystemEvaluationCounts& operator+=(const SystemEvaluationCounts& other);
  SystemEvaluationCounts operator-(const SystemEvaluationCounts& other) const;
};

// Thread safety: the evaluations are const. A system whose
// supports_concurrent_evaluation() is true may be evaluated from several threads at once
// (the families stage then continues families in parallel); the counters are kept per
// thread, so a computation running on one thread reads its own cost from thread_counts().
class VibrationalSystem {
 public:
  virtual ~VibrationalSystem() = default;

  virtual std::string description() const = 0;
  virtual int dimension() const = 0;

  // V(q) relative to the minimum. Counted.
  double potential(const Eigen::VectorXd& q) const {
    ++counters().potentials;
    return compute_potential(q);
  }
  // g = ∇V(q), resized to dimension(). Counted.
  void gradient(const Eigen::VectorXd& q, Eigen::VectorXd& g) const {
    ++counters().gradients;
    g.resize(dimension());
    compute_gradient(q, g);
  }
  // out = ∇²V(q) · directions (n × k in, n × k out). Counted by directions.
  void hessian_times(const Eigen::VectorXd& q, const Eigen::MatrixXd& directions,
                     Eigen::MatrixXd& out) const {
    counters().hessian_directions += static_cast<std::size_t>(directions.cols());
    out.resize(dimension(), directions.cols());
    compute_hessian_times(q, directions, out);
  }

  // Harmonic angular frequencies ω_k (radians per time unit), one per coordinate, all > 0.
  virtual Eigen::VectorXd harmonic_angular_frequencies() const = 0;
  virtual UnitConventions units() const { return {}; }
  // Energy above which bounded motion may cease (dissociation, a barrier); +∞ when
  // unknown. Continuation stops there with an escape status.
  virtual double escape_energy() const { return std::numeric_limits<double>::infinity(); }
  // Generators G (n × n, antisymmetric) of continuous symmetries exp(αG) of H acting on
  // the coordinates, e.g. a linear molecule's rotation about its axis. Each adds a
  // conserved momentum PᵀGQ and a pair of neutral Floquet multipliers at +1, which the
  // stability analysis removes.
  virtual std::vector<Eigen::MatrixXd> symmetry_generators() const { return {}; }
  int continuous_symmetry_count() const { return static_cast<int>(symmetry_generators().size()); }
  // Cartesian displacement (3N, Å, atom-major) for normal coordinates q when the system
  // is a molecule; an empty vector otherwise.
  virtual Eigen::VectorXd cartesian_displacement_angstrom(const Eigen::VectorXd& q) const;

  // True when the evaluations may run on several threads at once (see the class comment).
  virtual bool supports_concurrent_evaluation() const { return false; }

  // Evaluations made on the calling thread so far, through every system.
  static const SystemEvaluationCounts& thread_counts() { return counters(); }

 protected:
  virtual double compute_potential(const Eigen::VectorXd& q) const = 0;
  virtual void compute_gradient(const Eigen::VectorXd& q, Eigen::VectorXd& g) const = 0;
  // Default: for k < n directions, central differences of the gradient along each
  // direction (2k gradients); for k ≥ n, the full Hessian by central differences along
  // the coordinate axes (2n gradients) times the directions. Not symmetrized: callers
  // that need a symmetric matrix symmetrize their projection.
  virtual void compute_hessian_times(const Eigen::VectorXd& q, const Eigen::MatrixXd& directions,
                                     Eigen::MatrixXd& out) const;
  // Finite-difference step along a unit vector, in the unit of q. Central differences
  // err by about step²·|V''''|/6 (truncation) plus ε·|∇V|/step (round-off).
  virtual double hessian_step() const { return 1e-4; }
  // For implementations of compute_hessian_times that call a potential's analytic
  // Hessian or Hessian–vector product.
  static void count_hessians(std::size_t count) { counters().hessians += count; }
  static void count_hessian_vector_products(std::size_t count) {
    counters().hessian_vector_products += count;
  }

 private:
  static SystemEvaluationCounts& counters();
};

}  // namespace overtone
