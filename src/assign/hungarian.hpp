#pragma once
// Minimum-cost assignment (the Hungarian algorithm, H. W. Kuhn, Naval Res. Logist. Q. 2, 83
// (1955), in the O(n² m) shortest-augmenting-path form with row and column potentials):
// every row gets a distinct column so that the sum of the chosen costs is smallest.
#include <Eigen/Dense>
#include <vector>

namespace overtone {

// cost: n × m with n ≤ m, finite entries. Returns the column of each row. Throws Error for
// more rows than columns or a non-finite cost.
std::vector<int> minimum_cost_assignment(const Eigen::MatrixXd& cost);

// Σ_i cost(i, columns[i]).
double assignment_cost(const Eigen::MatrixXd& cost, const std::vector<int>& columns);

}  // namespace overtone
