#include "potential/potential.hpp"

#include "core/error.hpp"

namespace overtone {

Eigen::MatrixXd Potential::compute_hessian(const Eigen::VectorXd&) const {
  throw Error("the potential '" + description() + "' has no analytic hessian");
}

Eigen::VectorXd Potential::compute_hessian_vector_product(const Eigen::VectorXd&,
                                                          const Eigen::VectorXd&) const {
  throw Error("the potential '" + description() + "' has no analytic hessian-vector product");
}

void Potential::check_size(const Eigen::VectorXd& x) const {
  if (x.size() != static_cast<Eigen::Index>(3 * atom_count()))
    throw Error("potential '" + description() + "' is for " + std::to_string(atom_count()) +
                " atoms but got a coordinate vector of length " + std::to_string(x.size()));
}

}  // namespace overtone
