// Robust statistics of a score segment, for the relative threshold.
#pragma once

#include <cstddef>
#include <optional>
#include <vector>

namespace godwit::detail {

struct SegmentStats {
  double median = 0;
  double mad = 0;  // median absolute deviation from the median
};

// Statistics of the non-zero values of x[0, n) taken every `stride`-th;
// empty when fewer than 16 such values exist (silence, no scores).
std::optional<SegmentStats> segment_stats(const float* x, size_t n, size_t stride);

// max |x[i]| over [0, n), NaN-free input. Compares the IEEE bit patterns
// with the sign cleared as integers, which orders them like the magnitudes
// and lets the loop vectorize (a float max reduction would not, for NaN's
// sake).
float max_abs(const float* x, size_t n);

// Median of `v` (reordered); REQUIRES !v.empty().
double median_of(std::vector<double>& v);

}  // namespace godwit::detail
