#pragma once
// Abstract finite groups given by a faithful real orthogonal matrix representation
// (3×3 point-group operations, or any other dimension, e.g. 2×2 matrices of a model
// system), with the derived data the symmetry and families stages need: multiplication
// table, inverses, conjugacy classes, subgroups up to conjugacy and the one-dimensional
// complex characters (homomorphisms to the unit circle) of a subgroup.
//
// Identity maintained by FiniteGroup: the elements are pairwise distinct (largest
// entry-wise difference above the tolerance), closed under multiplication within the
// tolerance, and matrix(multiply(a, b)) ≈ matrix(a)·matrix(b).
#include <Eigen/Dense>
#include <string>
#include <vector>

namespace overtone {

class FiniteGroup {
 public:
  FiniteGroup() = default;

  // Closure of the given orthogonal generator matrices (all the same square dimension)
  // under multiplication. Element names: "E" for the identity, the generator names
  // (default "g1", "g2", …) for generators, and a shortest word ("g1·g2") otherwise.
  // tolerance: largest entry-wise deviation (dimensionless) allowed in MᵀM = I and when
  // two products are recognized as the same element.
  // Throws Error if the list is empty, the sizes differ, a matrix is not orthogonal, the
  // name list has the wrong length, or the closure exceeds max_order elements.
  static FiniteGroup generated_by(const std::vector<Eigen::MatrixXd>& generators,
                                  const std::vector<std::string>& generator_names = {},
                                  double tolerance = 1e-8, int max_order = 1000);

  // The given list must already be a group (contains the identity, closed, no repeats);
  // throws Error otherwise, or on size or orthogonality problems. Element order and
  // names are kept as given.
  static FiniteGroup from_elements(const std::vector<Eigen::MatrixXd>& elements,
                                   const std::vector<std::string>& names, double tolerance = 1e-8);

  int order() const { return static_cast<int>(matrices_.size()); }
  int dimension() const { return matrices_.empty() ? 0 : static_cast<int>(matrices_.front().rows()); }
  int identity() const { return identity_; }
  // Index of matrix(a)·matrix(b).
  int multiply(int a, int b) const { return table_[static_cast<std::size_t>(a) * matrices_.size() + b]; }
  int inverse(int a) const { return inverse_[a]; }
  // Smallest k ≥ 1 with a^k = identity.
  int element_order(int a) const { return element_order_[a]; }
  const Eigen::MatrixXd& matrix(int a) const { return matrices_[a]; }
  const std::string& name(int a) const { return names_[a]; }
  double tolerance() const { return tolerance_; }

  // Conjugacy classes: the identity's class first, then in order of each class's
  // smallest element index; the members of each class sorted.
  std::vector<std::vector<int>> conjugacy_classes() const;
  // Index of the element equal to m within tolerance (largest entry-wise deviation);
  // -1 if absent or if m has the wrong size.
  int find(const Eigen::MatrixXd& m, double tolerance = 1e-8) const;

 private:
  void build_lookup();
  void build_table();  // throws Error when a product is not an element

  std::vector<Eigen::MatrixXd> matrices_;
  std::vector<std::string> names_;
  std::vector<int> table_;
  std::vector<int> inverse_;
  std::vector<int> element_order_;
  int identity_ = 0;
  double tolerance_ = 1e-8;
  // Elements sorted by a fixed linear functional of their entries, so that find() only
  // compares the few elements whose key lies within reach of the tolerance.
  std::vector<std::pair<double, int>> lookup_;
  Eigen::MatrixXd key_weights_;
};

struct Subgroup {
  std::vector<int> elements;    // sorted indices into the parent group
  std::vector<int> generators;  // a small generating set (indices into the parent group)
  int conjugate_count = 1;      // number of distinct conjugates g·H·g⁻¹ in the parent
};

// Closure of the given elements of the group (indices) into a subgroup; generators are
// reduced to a small set. Throws Error for an index outside the group.
Subgroup subgroup_generated_by(const FiniteGroup& group, const std::vector<int>& elements);

// Every subgroup (all conjugates), sorted by order then lexicographically; each with
// conjugate_count of its class.
std::vector<Subgroup> all_subgroups(const FiniteGroup& group);

// All subgroups, one representative per conjugacy class (the lexicographically smallest
// sorted element list of the class), sorted by order then lexicographically by elements.
std::vector<Subgroup> subgroups_up_to_conjugacy(const FiniteGroup& group);

// A homomorphism θ: H → U(1) given exactly: θ(h) = 2π·phase_numerators[k]/phase_denominator
// for h = subgroup.elements[k]; phase_denominator = |H|; numerators in [0, |H|).
struct OneDimensionalCharacter {
  std::vector<int> phase_numerators;
  int phase_denominator = 1;
};

// Every one-dimensional character of the subgroup (there are |H/[H,H]| of them), the
// trivial one first, the rest sorted lexicographically by numerators. Throws Error when
// the element list is not a subgroup of the group.
std::vector<OneDimensionalCharacter> one_dimensional_characters(const FiniteGroup& group,
                                                                const Subgroup& subgroup);

}  // namespace overtone
