#pragma once
// One interface for every potential energy surface.
//
// Contract: coordinates are a 3N vector in Å (atom-major, the atom order of the
// Molecule the potential was built for); energies are in kcal/mol relative to an
// arbitrary zero; gradients in kcal/mol/Å are dE/dx (not forces); Hessians in
// kcal/mol/Å² are symmetric. Every public evaluation is counted so that stages can
// report how many evaluations they used (the counters are atomic, so counting is safe
// from several threads; whether the evaluations themselves are, says
// supports_concurrent_evaluation()).
#include <Eigen/Dense>
#include <atomic>
#include <cstddef>
#include <memory>
#include <string>
#include <vector>

#include "core/molecule.hpp"

namespace overtone {

struct EvaluationCounts {
  std::size_t energies = 0;                 // energy-only evaluations
  std::size_t gradients = 0;                // energy+gradient evaluations
  std::size_t hessians = 0;                 // analytic Hessian evaluations
  std::size_t hessian_vector_products = 0;  // analytic Hessian–vector products
};

class Potential {
 public:
  virtual ~Potential() = default;

  // Short human-readable name, e.g. "MMFF94 (Open Babel)" or the file's title.
  virtual std::string description() const = 0;
  virtual std::size_t atom_count() const = 0;
  virtual bool has_analytic_hessian() const { return false; }
  // Caveats about using this potential for the molecule it was set up for, in plain words
  // for the report: a force field applied outside what it was parameterized for, or a
  // feature of the surface met while evaluating it (such as a cusp). The list may grow
  // as evaluations find something; empty by default.
  virtual std::vector<std::string> warnings() const { return {}; }
  virtual bool has_analytic_hessian_vector_product() const { return false; }
  // True when energy, gradient, Hessian and Hessian–vector product may be called from
  // several threads at once on this object (no mutable state in the evaluation). False
  // by default; the Open Babel force fields keep their state in Open Babel objects.
  virtual bool supports_concurrent_evaluation() const { return false; }

  double energy(const Eigen::VectorXd& x) const {
    check_size(x);
    counts_.energies.fetch_add(1, std::memory_order_relaxed);
    return compute_energy(x);
  }
  // Returns the energy; writes dE/dx into gradient (resized to 3N).
  double energy_and_gradient(const Eigen::VectorXd& x, Eigen::VectorXd& gradient) const {
    check_size(x);
    counts_.gradients.fetch_add(1, std::memory_order_relaxed);
    gradient.resize(x.size());
    return compute_energy_and_gradient(x, gradient);
  }
  // Analytic Hessian; throws Error when has_analytic_hessian() is false.
  Eigen::MatrixXd hessian(const Eigen::VectorXd& x) const {
    check_size(x);
    counts_.hessians.fetch_add(1, std::memory_order_relaxed);
    return compute_hessian(x);
  }

  // H(x)·direction without forming H (kcal/mol/Å² times the direction's unit); throws
  // Error when has_analytic_hessian_vector_product() is false.
  Eigen::VectorXd hessian_vector_product(const Eigen::VectorXd& x, const Eigen::VectorXd& direction) const {
    check_size(x);
    check_size(direction);
    counts_.hessian_vector_products.fetch_add(1, std::memory_order_relaxed);
    return compute_hessian_vector_product(x, direction);
  }

  // A snapshot of the counters.
  EvaluationCounts counts() const {
    EvaluationCounts snapshot;
    snapshot.energies = counts_.energies.load(std::memory_order_relaxed);
    snapshot.gradients = counts_.gradients.load(std::memory_order_relaxed);
    snapshot.hessians = counts_.hessians.load(std::memory_order_relaxed);
    snapshot.hessian_vector_products = counts_.hessian_vector_products.load(std::memory_order_relaxed);
    return snapshot;
  }
  void reset_counts() const {
    counts_.energies = 0;
    counts_.gradients = 0;
    counts_.hessians = 0;
    counts_.hessian_vector_products = 0;
  }

 protected:
  virtual double compute_energy(const Eigen::VectorXd& x) const = 0;
  virtual double compute_energy_and_gradient(const Eigen::VectorXd& x, Eigen::VectorXd& gradient) const = 0;
  virtual Eigen::MatrixXd compute_hessian(const Eigen::VectorXd& x) const;
  virtual Eigen::VectorXd compute_hessian_vector_product(const Eigen::VectorXd& x,
                                                         const Eigen::VectorXd& direction) const;

 private:
  void check_size(const Eigen::VectorXd& x) const;
  struct AtomicCounts {
    std::atomic<std::size_t> energies{0}, gradients{0}, hessians{0}, hessian_vector_products{0};
  };
  mutable AtomicCounts counts_;
};

}  // namespace overtone
