// WindowEnergy: sliding sums of one block, in double precision.
//
// After `assign(x, n)` the block is mean-removed in place (the mean is
// returned) and prefix sums of x and x^2 allow the energy about the window
// mean, E(k, M) = sum (x - mean_k)^2 over x[k, k+M), in O(1) per window.
// Sums run from the block start, so their rounding stays that of one block
// however long the recording.
//
// Thread contract: one per stream; `energy()` is const and may be called
// from several threads once `assign` has returned.
#pragma once

#include <cstddef>
#include <vector>

namespace godwit::detail {

class WindowEnergy {
 public:
  // Removes the mean of x[0, n_real) from those samples and zeroes
  // x[n_real, n). Returns the block's energy after mean removal.
  double assign(float* x, size_t n_real, size_t n);
  double energy(size_t k, size_t len) const {
    const double s1 = s1_[k + len] - s1_[k];
    const double s2 = s2_[k + len] - s2_[k];
    const double e = s2 - s1 * s1 / static_cast<double>(len);
    return e > 0 ? e : 0;
  }

 private:
  std::vector<double> s1_, s2_;
};

}  // namespace godwit::detail
