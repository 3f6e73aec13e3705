#include "assign/hungarian.hpp"

#include <fmt/format.h>

#include <cmath>
#include <limits>

#include "core/error.hpp"

namespace overtone {

namespace {

// Augments row `row` into the matching held in column_row (1-based rows, 0 = free column;
// index 0 is the virtual start column), updating the potentials u (rows) and v (columns).
void augment(const Eigen::MatrixXd& cost, int row, std::vector<double>& u, std::vector<double>& v,
             std::vector<int>& column_row) {
  const int m = static_cast<int>(cost.cols());
  const double infinity = std::numeric_limits<double>::infinity();
  std::vector<double> slack(static_cast<std::size_t>(m + 1), infinity);
  std::vector<int> previous(static_cast<std::size_t>(m + 1), 0);
  std::vector<bool> used(static_cast<std::size_t>(m + 1), false);
  column_row[0] = row;
  int column = 0;
  do {
    used[static_cast<std::size_t>(column)] = true;
    const int i = column_row[static_cast<std::size_t>(column)];
    double delta = infinity;
    int next = 0;
    for (int j = 1; j <= m; ++j) {
      if (used[static_cast<std::size_t>(j)]) continue;
      const double reduced =
          cost(i - 1, j - 1) - u[static_cast<std::size_t>(i)] - v[static_cast<std::size_t>(j)];
      if (reduced < slack[static_cast<std::size_t>(j)]) {
        slack[static_cast<std::size_t>(j)] = reduced;
        previous[static_cast<std::size_t>(j)] = column;
      }
      if (slack[static_cast<std::size_t>(j)] < delta) {
        delta = slack[static_cast<std::size_t>(j)];
        next = j;
      }
    }
    for (int j = 0; j <= m; ++j) {
      if (used[static_cast<std::size_t>(j)]) {
        u[static_cast<std::size_t>(column_row[static_cast<std::size_t>(j)])] += delta;
        v[static_cast<std::size_t>(j)] -= delta;
      } else {
        slack[static_cast<std::size_t>(j)] -= delta;
      }
    }
    column = next;
  } while (column_row[static_cast<std::size_t>(column)] != 0);
  while (column != 0) {  // flip the augmenting path
    const int back = previous[static_cast<std::size_t>(column)];
    column_row[static_cast<std::size_t>(column)] = column_row[static_cast<std::size_t>(back)];
    column = back;
  }
}

}  // namespace

std::vector<int> minimum_cost_assignment(const Eigen::MatrixXd& cost) {
  const int n = static_cast<int>(cost.rows()), m = static_cast<int>(cost.cols());
  if (n > m)
    throw Error(fmt::format("assignment: expected at most as many rows as columns, got {} × {}", n, m));
  if (!cost.allFinite()) throw Error("assignment: expected finite costs, got a non-finite one");
  std::vector<double> u(static_cast<std::size_t>(n + 1), 0.0), v(static_cast<std::size_t>(m + 1), 0.0);
  std::vector<int> column_row(static_cast<std::size_t>(m + 1), 0);
  for (int row = 1; row <= n; ++row) augment(cost, row, u, v, column_row);
  std::vector<int> columns(static_cast<std::size_t>(n), -1);
  for (int j = 1; j <= m; ++j)
    if (column_row[static_cast<std::size_t>(j)] != 0)
      columns[static_cast<std::size_t>(column_row[static_cast<std::size_t>(j)] - 1)] = j - 1;
  return columns;
}

double assignment_cost(const Eigen::MatrixXd& cost, const std::vector<int>& columns) {
  double total = 0.0;
  for (std::size_t i = 0; i < columns.size(); ++i) total += cost(static_cast<Eigen::Index>(i), columns[i]);
  return total;
}

}  // namespace overtone
