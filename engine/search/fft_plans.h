// FftPlans: FFTW single-precision plans, made once per size and reused.
//
// Thread contract: `get()` may be called from several threads (planning is
// serialized under the process-wide planner lock, since the FFTW planner is
// not thread-safe); executing a returned plan through the new-array calls is
// safe from any thread on buffers from FftBuffer (same alignment).
#pragma once

#include <fftw3.h>

#include <complex>
#include <cstddef>
#include <map>
#include <memory>
#include <mutex>

#include "godwit/search/fft_size_chooser.h"

namespace godwit::detail {

// The planner lock: every call into FFTW other than fftwf_execute_* holds it.
std::mutex& fftw_planner_mutex();

struct FftPlan {
  size_t size = 0;
  fftwf_plan forward = nullptr;  // r2c, size real -> size/2+1 complex
  fftwf_plan inverse = nullptr;  // c2r, unnormalized
};

class FftPlans {
 public:
  explicit FftPlans(Planner planner) : planner_(planner) {}
  ~FftPlans();
  FftPlans(const FftPlans&) = delete;
  FftPlans& operator=(const FftPlans&) = delete;
  const FftPlan& get(size_t size);

 private:
  Planner planner_;
  std::mutex mu_;
  std::map<size_t, std::unique_ptr<FftPlan>> plans_;  // GUARDED_BY(mu_)
};

// SIMD-aligned buffers for plan execution.
struct FftwFree {
  void operator()(void* p) const { fftwf_free(p); }
};
using RealBuffer = std::unique_ptr<float[], FftwFree>;
using ComplexBuffer = std::unique_ptr<std::complex<float>[], FftwFree>;
RealBuffer alloc_real(size_t n);
ComplexBuffer alloc_complex(size_t n);

// out[k] = a[k] * b[k] over n bins. Spelled out because std::complex's
// operator* checks for NaN and infinity (C99 Annex G) and does not vectorize.
inline void multiply_spectra(const std::complex<float>* a, const std::complex<float>* b,
                             std::complex<float>* out, size_t n) {
  const float* af = reinterpret_cast<const float*>(a);
  const float* bf = reinterpret_cast<const float*>(b);
  float* of = reinterpret_cast<float*>(out);
  for (size_t k = 0; k < n; ++k) {
    const float re = af[2 * k] * bf[2 * k] - af[2 * k + 1] * bf[2 * k + 1];
    const float im = af[2 * k] * bf[2 * k + 1] + af[2 * k + 1] * bf[2 * k];
    of[2 * k] = re;
    of[2 * k + 1] = im;
  }
}

inline fftwf_complex* as_fftw(std::complex<float>* p) { return reinterpret_cast<fftwf_complex*>(p); }

}  // namespace godwit::detail
