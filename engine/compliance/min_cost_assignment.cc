#include "min_cost_assignment.h"

#include <limits>
#include <stdexcept>

namespace godwit::detail {

// The shortest-augmenting-path form of the Hungarian method: rows are added
// one at a time and the cheapest augmenting path to a free column is found
// with Dijkstra-like relaxation over reduced costs (row potentials u,
// column potentials v). 1-based internally; column 0 is the virtual start.
std::vector<size_t> min_cost_assignment(const std::vector<std::vector<AssignmentCost>>& cost) {
  const size_t n = cost.size();
  if (n == 0) return {};
  const size_t m = cost[0].size();
  if (m < n) throw std::invalid_argument("min_cost_assignment: more rows than columns");
  const AssignmentCost kInf = static_cast<AssignmentCost>(std::numeric_limits<int64_t>::max()) << 60;
  std::vector<AssignmentCost> u(n + 1, 0), v(m + 1, 0);
  std::vector<size_t> row_of(m + 1, 0), way(m + 1, 0);
  for (size_t i = 1; i <= n; ++i) {
    row_of[0] = i;
    size_t j0 = 0;
    std::vector<AssignmentCost> minv(m + 1, kInf);
    std::vector<char> used(m + 1, 0);
    do {
      used[j0] = 1;
      const size_t i0 = row_of[j0];
      AssignmentCost delta = kInf;
      size_t j1 = 0;
      for (size_t j = 1; j <= m; ++j) {
        if (used[j]) continue;
        const AssignmentCost cur = cost[i0 - 1][j - 1] - u[i0] - v[j];
        if (cur < minv[j]) {
          minv[j] = cur;
          way[j] = j0;
        }
        if (minv[j] < delta) {
          delta = minv[j];
          j1 = j;
        }
      }
      for (size_t j = 0; j <= m; ++j) {
        if (used[j]) {
          u[row_of[j]] += delta;
          v[j] -= delta;
        } else {
          minv[j] -= delta;
        }
      }
      j0 = j1;
    } while (row_of[j0] != 0);
    do {
      const size_t j1 = way[j0];
      row_of[j0] = row_of[j1];
      j0 = j1;
    } while (j0 != 0);
  }
  std::vector<size_t> col_of(n, 0);
  for (size_t j = 1; j <= m; ++j)
    if (row_of[j] != 0) col_of[row_of[j] - 1] = j - 1;
  return col_of;
}

}  // namespace godwit::detail
