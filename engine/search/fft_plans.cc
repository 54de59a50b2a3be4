#include "fft_plans.h"

#include <stdexcept>

namespace godwit::detail {

std::mutex& fftw_planner_mutex() {
  static std::mutex mu;
  return mu;
}

FftPlans::~FftPlans() {
  std::lock_guard planner(fftw_planner_mutex());
  for (auto& [size, plan] : plans_) {
    fftwf_destroy_plan(plan->forward);
    fftwf_destroy_plan(plan->inverse);
  }
}

const FftPlan& FftPlans::get(size_t size) {
  std::lock_guard lock(mu_);
  auto it = plans_.find(size);
  if (it != plans_.end()) return *it->second;
  auto plan = std::make_unique<FftPlan>();
  plan->size = size;
  {
    // MEASURE scribbles on the arrays: plan on scratch buffers, execute on
    // others through the new-array interface.
    RealBuffer real = alloc_real(size);
    ComplexBuffer spec = alloc_complex(size / 2 + 1);
    std::lock_guard planner(fftw_planner_mutex());
    const unsigned flags = planner_ == Planner::measure ? FFTW_MEASURE : FFTW_ESTIMATE;
    if (planner_ == Planner::measure) fftwf_set_timelimit(20.0);
    const int n = static_cast<int>(size);
    plan->forward = fftwf_plan_dft_r2c_1d(n, real.get(), as_fftw(spec.get()), flags);
    plan->inverse = fftwf_plan_dft_c2r_1d(n, as_fftw(spec.get()), real.get(), flags);
  }
  if (!plan->forward || !plan->inverse) throw std::runtime_error("FFTW could not make a plan");
  auto& ref = *plan;
  plans_.emplace(size, std::move(plan));
  return ref;
}

RealBuffer alloc_real(size_t n) {
  auto* p = fftwf_alloc_real(n);
  if (!p) throw std::bad_alloc();
  return RealBuffer(p);
}

ComplexBuffer alloc_complex(size_t n) {
  auto* p = fftwf_alloc_complex(n);
  if (!p) throw std::bad_alloc();
  return ComplexBuffer(reinterpret_cast<std::complex<float>*>(p));
}

}  // namespace godwit::detail
