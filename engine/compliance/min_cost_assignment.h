// Minimum-cost assignment of rows to columns (the Hungarian method with
// potentials, O(rows² · cols)), exact on integer costs.
//
// Every row is assigned to a distinct column, so rows <= cols is required;
// a caller that lets a row stay unassigned gives it columns of its own that
// stand for "none". Costs are 128-bit integers, so that a caller can make
// "one more row assigned" outweigh any sum of pair costs.
//
// Thread contract: a plain function.
#pragma once

#include <cstddef>
#include <cstdint>
#include <vector>

namespace godwit::detail {

__extension__ typedef __int128 AssignmentCost;

// cost[r][c] for rows r < R and columns c < C (R <= C, every row of length
// C). Returns the column of each row.
std::vector<size_t> min_cost_assignment(const std::vector<std::vector<AssignmentCost>>& cost);

}  // namespace godwit::detail
