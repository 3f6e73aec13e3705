#pragma once
// Small vibrational models for the anharmonic tests: force constants given directly in
// dimensionless normal coordinates, and an independent dense-matrix Hamiltonian in the
// product harmonic-oscillator basis for exact diagonalization.
#include <Eigen/Dense>
#include <Eigen/Sparse>
#include <functional>
#include <vector>

#include "anharmonic/force_constants.hpp"
#include "core/units.hpp"
#include "harmonic/harmonic.hpp"
#include "symmetry/mode_symmetry.hpp"

namespace overtone::testing {

// A harmonic result with the given wavenumbers and placeholder geometry/modes (two atoms
// per mode on a line; only sizes matter, the Coriolis term must be switched off).
inline HarmonicResult model_harmonic(const std::vector<double>& frequencies_cm1) {
  const int m = static_cast<int>(frequencies_cm1.size());
  const int atoms = m + 1;
  HarmonicResult h;
  h.coordinates_angstrom = Eigen::VectorXd::Zero(3 * atoms);
  for (int a = 0; a < atoms; ++a) h.coordinates_angstrom[3 * a] = a;
  h.masses_da = Eigen::VectorXd::Ones(atoms);
  h.frequencies_cm1 = Eigen::Map<const Eigen::VectorXd>(frequencies_cm1.data(), m);
  h.eigenvalues.resize(m);
  for (int k = 0; k < m; ++k) h.eigenvalues[k] = units::eigenvalue_from_wavenumber_cm1(frequencies_cm1[k]);
  h.mass_weighted_modes = Eigen::MatrixXd::Zero(3 * atoms, m);
  for (int k = 0; k < m; ++k) h.mass_weighted_modes(3 * k + 1, k) = 1.0;
  return h;
}

// A force-constant result for a model: constants set through the callback.
inline ForceConstantResult model_force_constants(const std::vector<double>& frequencies_cm1,
                                                 const std::function<void(ForceConstantTensors&)>& fill) {
  ForceConstantResult fc;
  const int m = static_cast<int>(frequencies_cm1.size());
  fc.frequencies_cm1 = Eigen::Map<const Eigen::VectorXd>(frequencies_cm1.data(), m);
  fc.constants = ForceConstantTensors(m);
  fill(fc.constants);
  fc.symmetry = ModeSymmetry::without_group(fc.frequencies_cm1);
  fc.full_quartic = true;
  return fc;
}

// Dense Hamiltonian H = Σ ω(n+½) + (1/6)Σφ_ijk q q q + (1/24)Σφ_ijkl q q q q with
// unrestricted sums, built from truncated matrices q = (a + a†)/√2 by Kronecker products;
// basis index = Σ n_i · basis_size^(m−1−i). Written independently of the library's
// operator code.
class DenseModel {
 public:
  DenseModel(const std::vector<double>& omega, int basis_size) : omega_(omega), size_(basis_size) {
    const int m = static_cast<int>(omega.size());
    dimension_ = 1;
    for (int i = 0; i < m; ++i) dimension_ *= size_;
    Eigen::SparseMatrix<double> q1(size_, size_);
    for (int n = 0; n + 1 < size_; ++n) {
      q1.insert(n, n + 1) = std::sqrt((n + 1) / 2.0);
      q1.insert(n + 1, n) = std::sqrt((n + 1) / 2.0);
    }
    Eigen::SparseMatrix<double> identity(size_, size_);
    identity.setIdentity();
    for (int i = 0; i < m; ++i) {
      Eigen::SparseMatrix<double> op(1, 1);
      op.insert(0, 0) = 1.0;
      for (int j = 0; j < m; ++j) op = kronecker(op, j == i ? q1 : identity);
      q_.push_back(op);
    }
    h0_ = Eigen::VectorXd::Zero(dimension_);
    for (int index = 0; index < dimension_; ++index) {
      int rest = index;
      for (int i = m - 1; i >= 0; --i) {
        h0_[index] += omega[static_cast<std::size_t>(i)] * (rest % size_ + 0.5);
        rest /= size_;
      }
    }
  }

  int index(const std::vector<int>& n) const {
    int k = 0;
    for (int v : n) k = k * size_ + v;
    return k;
  }

  // V₃ and V₄ from the tensors (unrestricted sums).
  Eigen::MatrixXd anharmonic(const ForceConstantTensors& t) const {
    const int m = static_cast<int>(omega_.size());
    Eigen::SparseMatrix<double> v(dimension_, dimension_);
    for (int i = 0; i < m; ++i)
      for (int j = 0; j < m; ++j) {
        const Eigen::SparseMatrix<double> qq = q_[i] * q_[j];
        for (int k = 0; k < m; ++k) {
          const double phi = t.cubic(i, j, k);
          const Eigen::SparseMatrix<double> qqq = qq * q_[k];
          if (phi != 0.0) v += phi / 6.0 * qqq;
          for (int l = 0; l < m; ++l) {
            const double psi = t.quartic(i, j, k, l);
            if (psi != 0.0) v += psi / 24.0 * (qqq * q_[l]);
          }
        }
      }
    return Eigen::MatrixXd(v);
  }

  Eigen::MatrixXd hamiltonian(const ForceConstantTensors& t) const {
    Eigen::MatrixXd h = anharmonic(t);
    h.diagonal() += h0_;
    return h;
  }

  int dimension() const { return dimension_; }

 private:
  std::vector<double> omega_;
  int size_ = 0;
  int dimension_ = 1;
  static Eigen::SparseMatrix<double> kronecker(const Eigen::SparseMatrix<double>& a,
                                               const Eigen::SparseMatrix<double>& b) {
    Eigen::SparseMatrix<double> result(a.rows() * b.rows(), a.cols() * b.cols());
    std::vector<Eigen::Triplet<double>> entries;
    for (int ca = 0; ca < a.outerSize(); ++ca)
      for (Eigen::SparseMatrix<double>::InnerIterator ia(a, ca); ia; ++ia)
        for (int cb = 0; cb < b.outerSize(); ++cb)
          for (Eigen::SparseMatrix<double>::InnerIterator ib(b, cb); ib; ++ib)
            entries.emplace_back(static_cast<int>(ia.row() * b.rows() + ib.row()),
                                 static_cast<int>(ia.col() * b.cols() + ib.col()), ia.value() * ib.value());
    result.setFromTriplets(entries.begin(), entries.end());
    return result;
  }

  std::vector<Eigen::SparseMatrix<double>> q_;
  Eigen::VectorXd h0_;
};

}  // namespace overtone::testing
