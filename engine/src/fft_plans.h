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

#include "godwit/fft_size_chooser.h"

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

inline fftwf_complex* as_fftw(std::complex<float>* p) { return reinterpret_cast<fftwf_complex*>(p); }

}  // namespace godwit::detail
