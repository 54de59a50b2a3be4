#include "window_energy.h"

#include <algorithm>

namespace godwit::detail {

double WindowEnergy::assign(float* x, size_t n_real, size_t n) {
  double sum = 0;
  for (size_t i = 0; i < n_real; ++i) sum += x[i];
  const double mean = n_real ? sum / static_cast<double>(n_real) : 0.0;
  const float fmean = static_cast<float>(mean);
  s1_.resize(n + 1);
  s2_.resize(n + 1);
  s1_[0] = s2_[0] = 0;
  double a = 0, b = 0;
  for (size_t i = 0; i < n_real; ++i) {
    x[i] -= fmean;
    a += x[i];
    b += static_cast<double>(x[i]) * x[i];
    s1_[i + 1] = a;
    s2_[i + 1] = b;
  }
  std::fill(x + n_real, x + n, 0.0f);
  for (size_t i = n_real; i < n; ++i) {
    s1_[i + 1] = a;
    s2_[i + 1] = b;
  }
  return b;
}

}  // namespace godwit::detail
