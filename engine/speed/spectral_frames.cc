#include "spectral_frames.h"

#include <algorithm>
#include <cmath>
#include <numbers>

namespace godwit::detail {

std::vector<double> EnvelopeBands::edges_hz(double rate_hz) const {
  const double hi = std::min(high_hz, 0.475 * rate_hz);
  const double lo = std::min(low_hz, 0.5 * hi);
  std::vector<double> e(count + 1);
  for (size_t b = 0; b <= count; ++b)
    e[b] = lo * std::pow(hi / lo, static_cast<double>(b) / static_cast<double>(count));
  return e;
}

SpectralFrames::SpectralFrames(FftPlans& plans, double rate_hz, size_t window, size_t hop)
    : rate_hz_(rate_hz), window_(window), hop_(std::max<size_t>(1, std::min(hop, window))), bins_(window / 2 + 1),
      hann_(window), frame_(alloc_real(window)), spectrum_(alloc_complex(window / 2 + 1)), plan_(&plans.get(window)) {
  for (size_t i = 0; i < window; ++i)
    hann_[i] = static_cast<float>(0.5 - 0.5 * std::cos(2 * std::numbers::pi * (static_cast<double>(i) + 0.5) /
                                                      static_cast<double>(window)));
}

SpectralFrames::~SpectralFrames() = default;

void SpectralFrames::reset() {
  pending_.clear();
  pending_pos_ = 0;
  first_ = 0;
  count_ = 0;
  slot0_ = 0;
}

void SpectralFrames::drop_before(int64_t frame) {
  if (frame <= first_) return;
  const size_t n = static_cast<size_t>(std::min<int64_t>(frame - first_, static_cast<int64_t>(count_)));
  slot0_ = capacity_ ? (slot0_ + n) % capacity_ : 0;
  count_ -= n;
  first_ += static_cast<int64_t>(n);
}

void SpectralFrames::push(const float* x, size_t n) {
  pending_.insert(pending_.end(), x, x + n);
  const size_t stride = bins_ + 1;
  while (pending_.size() - pending_pos_ >= window_) {
    const float* w = pending_.data() + pending_pos_;
    float* f = frame_.get();
    for (size_t i = 0; i < window_; ++i) f[i] = w[i] * hann_[i];
    fftwf_execute_dft_r2c(plan_->forward, f, as_fftw(spectrum_.get()));
    if (count_ == capacity_) {
      // Grow the ring, laying it out from slot 0.
      const size_t cap = std::max<size_t>(64, 2 * capacity_);
      std::vector<float> grown(cap * stride);
      for (size_t k = 0; k < count_; ++k) {
        const size_t from = (slot0_ + k) % capacity_;
        std::copy_n(cum_.data() + from * stride, stride, grown.data() + k * stride);
      }
      cum_.swap(grown);
      capacity_ = cap;
      slot0_ = 0;
    }
    float* c = cum_.data() + ((slot0_ + count_) % capacity_) * stride;
    double acc = 0;
    c[0] = 0;
    const std::complex<float>* s = spectrum_.get();
    for (size_t k = 0; k < bins_; ++k) {
      acc += static_cast<double>(std::norm(s[k]));
      c[k + 1] = static_cast<float>(acc);
    }
    ++count_;
    pending_pos_ += hop_;
    if (pending_pos_ >= (size_t{1} << 16)) {
      pending_.erase(pending_.begin(), pending_.begin() + static_cast<long>(pending_pos_));
      pending_pos_ = 0;
    }
  }
}

bool SpectralFrames::covers(double t) const {
  const double q = frame_at(t);
  if (!(q >= static_cast<double>(first_))) return false;
  const int64_t f0 = static_cast<int64_t>(std::floor(q));
  return f0 + 1 < end_frame();
}

double SpectralFrames::cumulative(size_t slot, double bin) const {
  const float* c = cum_.data() + slot * (bins_ + 1);
  const double p = std::clamp(bin, 0.0, static_cast<double>(bins_));
  const size_t i = std::min(static_cast<size_t>(p), bins_ - 1);
  const double frac = p - static_cast<double>(i);
  return c[i] + frac * (c[i + 1] - c[i]);
}

void SpectralFrames::envelope_at(double t, const std::vector<double>& edges_hz, double scale, float* out) const {
  const double q = frame_at(t);
  const int64_t f0 = static_cast<int64_t>(std::floor(q));
  const double w = q - static_cast<double>(f0);
  const size_t s0 = (slot0_ + static_cast<size_t>(f0 - first_)) % capacity_;
  const size_t s1 = (s0 + 1) % capacity_;
  const double to_bin = static_cast<double>(window_) / rate_hz_ * scale;
  double lo0 = cumulative(s0, edges_hz[0] * to_bin), lo1 = cumulative(s1, edges_hz[0] * to_bin);
  for (size_t b = 0; b + 1 < edges_hz.size(); ++b) {
    const double bin = edges_hz[b + 1] * to_bin;
    const double hi0 = cumulative(s0, bin), hi1 = cumulative(s1, bin);
    const double e = (1 - w) * (hi0 - lo0) + w * (hi1 - lo1);
    out[b] = static_cast<float>(std::sqrt(std::max(0.0, e)));
    lo0 = hi0;
    lo1 = hi1;
  }
}

std::vector<float> envelope_of(FftPlans& plans, const std::vector<float>& x, double rate_hz, size_t window,
                               size_t frame_hop, size_t hop_out, const EnvelopeBands& bands, size_t& frames_out) {
  SpectralFrames frames(plans, rate_hz, window, frame_hop);
  frames.push(x.data(), x.size());
  const auto edges = bands.edges_hz(rate_hz);
  std::vector<float> env;
  frames_out = 0;
  for (;;) {
    const double t = 0.5 * static_cast<double>(window) + static_cast<double>(frames_out * hop_out);
    if (!frames.covers(t)) break;
    env.resize((frames_out + 1) * bands.count);
    frames.envelope_at(t, edges, 1.0, env.data() + frames_out * bands.count);
    ++frames_out;
  }
  return env;
}

}  // namespace godwit::detail
