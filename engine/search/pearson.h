// Pearson correlation coefficient of two short equal-length spans, in
// double precision (verification and sibling comparison; the correlator
// has its own FFT path). Returns 0 when either span's energy about its
// mean is at or below `min_energy_per_sample` * n: such a span gives no
// evidence either way.
#pragma once

#include <algorithm>
#include <cmath>
#include <cstddef>

namespace godwit::detail {

inline double pearson(const float* a, const float* b, size_t n, double min_energy_per_sample) {
  double sa = 0, sb = 0;
  for (size_t i = 0; i < n; ++i) sa += a[i], sb += b[i];
  const double ma = sa / static_cast<double>(n), mb = sb / static_cast<double>(n);
  double dot = 0, ea = 0, eb = 0;
  for (size_t i = 0; i < n; ++i) {
    const double x = a[i] - ma, y = b[i] - mb;
    dot += x * y, ea += x * x, eb += y * y;
  }
  const double floor = min_energy_per_sample * static_cast<double>(n);
  if (!(ea > floor) || !(eb > floor)) return 0.0;
  return std::clamp(dot / std::sqrt(ea * eb), -1.0, 1.0);
}

}  // namespace godwit::detail
