#include "noise_floor.h"

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <cstring>

namespace godwit::detail {

float max_abs(const float* x, size_t n) {
  uint32_t best = 0;
  for (size_t i = 0; i < n; ++i) {
    uint32_t bits;
    std::memcpy(&bits, x + i, sizeof bits);
    bits &= 0x7fffffffu;
    best = bits > best ? bits : best;
  }
  float out;
  std::memcpy(&out, &best, sizeof out);
  return out;
}

double median_of(std::vector<double>& v) {
  const size_t mid = v.size() / 2;
  std::nth_element(v.begin(), v.begin() + static_cast<long>(mid), v.end());
  double m = v[mid];
  if (v.size() % 2 == 0) {
    const double lower = *std::max_element(v.begin(), v.begin() + static_cast<long>(mid));
    m = 0.5 * (m + lower);
  }
  return m;
}

std::optional<SegmentStats> segment_stats(const float* x, size_t n, size_t stride) {
  std::vector<double> v;
  v.reserve(n / stride + 1);
  for (size_t i = 0; i < n; i += stride)
    if (x[i] != 0.0f) v.push_back(x[i]);
  if (v.size() < 16) return std::nullopt;
  SegmentStats s;
  s.median = median_of(v);
  for (double& d : v) d = std::fabs(d - s.median);
  s.mad = median_of(v);
  return s;
}

}  // namespace godwit::detail
