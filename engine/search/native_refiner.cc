#include "godwit/search/native_refiner.h"

#include <algorithm>
#include <cmath>
#include <vector>

namespace godwit {

std::optional<Refinement> refine_offset(const Samples& tmpl, const Samples& span, int polarity) {
  const size_t m = tmpl.size();
  if (m < 2 || span.size() < m + 2) return std::nullopt;
  // Zero-mean, unit-norm template.
  double mean = 0;
  for (float v : tmpl) mean += v;
  mean /= static_cast<double>(m);
  std::vector<double> t(m);
  double norm = 0;
  for (size_t i = 0; i < m; ++i) {
    t[i] = tmpl[i] - mean;
    norm += t[i] * t[i];
  }
  if (!(norm > 0)) return std::nullopt;
  norm = std::sqrt(norm);
  for (double& v : t) v /= norm;

  const size_t n_off = span.size() - m + 1;
  std::vector<double> r(n_off, 0.0);
  double s1 = 0, s2 = 0;
  for (size_t i = 0; i < m; ++i) {
    s1 += span[i];
    s2 += static_cast<double>(span[i]) * span[i];
  }
  for (size_t k = 0; k < n_off; ++k) {
    if (k > 0) {
      const double out = span[k - 1], in = span[k + m - 1];
      s1 += in - out;
      s2 += in * in - out * out;
    }
    const double e = s2 - s1 * s1 / static_cast<double>(m);
    if (!(e > 1e-12 * static_cast<double>(m))) continue;
    double dot = 0;
    const float* x = span.data() + k;
    for (size_t i = 0; i < m; ++i) dot += t[i] * x[i];
    r[k] = std::clamp(dot / std::sqrt(e), -1.0, 1.0);
  }
  size_t best = 0;
  for (size_t k = 1; k < n_off; ++k)
    if (polarity * r[k] > polarity * r[best]) best = k;
  if (r[best] == 0.0 || best == 0 || best + 1 == n_off) return std::nullopt;
  const double y0 = polarity * r[best - 1], y1 = polarity * r[best], y2 = polarity * r[best + 1];
  const double den = y0 - 2 * y1 + y2;
  double delta = 0;
  if (den < 0) delta = std::clamp(0.5 * (y0 - y2) / den, -0.5, 0.5);
  return Refinement{static_cast<double>(best) + delta, r[best]};
}

}  // namespace godwit
