#include "godwit/audio/resampler.h"

#include <soxr.h>

#include <cmath>
#include <stdexcept>

namespace godwit {

struct Resampler::Impl {
  soxr_t soxr = nullptr;
  ~Impl() {
    if (soxr) soxr_delete(soxr);
  }
};

Resampler::Resampler(double in_rate_hz, double out_rate_hz)
    : in_rate_hz_(in_rate_hz), out_rate_hz_(out_rate_hz), impl_(std::make_unique<Impl>()) {
  if (in_rate_hz_ == out_rate_hz_) return;
  soxr_error_t err = nullptr;
  const soxr_io_spec_t io = soxr_io_spec(SOXR_FLOAT32_I, SOXR_FLOAT32_I);
  const soxr_quality_spec_t q = soxr_quality_spec(SOXR_HQ, 0);
  impl_->soxr = soxr_create(in_rate_hz_, out_rate_hz_, 1, &err, &io, &q, nullptr);
  if (err) throw std::runtime_error(std::string("soxr_create: ") + err);
}

Resampler::~Resampler() = default;

void Resampler::process(const float* in, size_t n, Samples& out) {
  if (!impl_->soxr) {
    out.insert(out.end(), in, in + n);
    return;
  }
  const size_t base = out.size();
  const size_t room = static_cast<size_t>(std::ceil(static_cast<double>(n) * out_rate_hz_ / in_rate_hz_)) + 64;
  out.resize(base + room);
  size_t idone = 0, odone = 0;
  soxr_process(impl_->soxr, in, n, &idone, out.data() + base, room, &odone);
  out.resize(base + odone);
}

void Resampler::flush(Samples& out) {
  if (!impl_->soxr) return;
  for (;;) {
    const size_t base = out.size();
    out.resize(base + 4096);
    size_t odone = 0;
    soxr_process(impl_->soxr, nullptr, 0, nullptr, out.data() + base, 4096, &odone);
    out.resize(base + odone);
    if (odone == 0) break;
  }
}

void Resampler::reset() {
  if (impl_->soxr) soxr_clear(impl_->soxr);
}

Samples resample_all(const Samples& in, double in_rate_hz, double out_rate_hz) {
  Resampler r(in_rate_hz, out_rate_hz);
  Samples out;
  out.reserve(static_cast<size_t>(static_cast<double>(in.size()) * out_rate_hz / in_rate_hz) + 16);
  r.process(in.data(), in.size(), out);
  r.flush(out);
  return out;
}

}  // namespace godwit
