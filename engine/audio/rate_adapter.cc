#include "rate_adapter.h"

#include <algorithm>
#include <cmath>
#include <numeric>

namespace godwit {

RateAdapter::RateAdapter(SourcePtr inner, double out_rate_hz)
    : inner_(std::move(inner)), info_(inner_->info()), in_rate_hz_(inner_->info().native_rate_hz) {
  info_.native_rate_hz = out_rate_hz;
  if (info_.native_frames)
    info_.native_frames = std::llround(static_cast<double>(*info_.native_frames) * out_rate_hz / in_rate_hz_);
}

void RateAdapter::make_resamplers(size_t channels) {
  resamplers_.clear();
  for (size_t c = 0; c < channels; ++c) resamplers_.push_back(std::make_unique<Resampler>(in_rate_hz_, info_.native_rate_hz));
  pending_.assign(channels, Samples{});
  ended_ = false;
}

Result<size_t> RateAdapter::read(float* out, size_t max_frames) { return read_impl(out, max_frames, false); }

Result<size_t> RateAdapter::read_interleaved(float* out, size_t max_frames) { return read_impl(out, max_frames, true); }

bool RateAdapter::refill(size_t width, bool interleaved, size_t max_frames) {
  if (ended_) return false;
  const size_t want = std::max<size_t>(
      1024, static_cast<size_t>(static_cast<double>(max_frames) * in_rate_hz_ / info_.native_rate_hz) + 16);
  in_buf_.resize(want * width);
  auto got = interleaved ? inner_->read_interleaved(in_buf_.data(), want) : inner_->read(in_buf_.data(), want);
  if (!got) {
    error_ = got.error();
    return false;
  }
  const size_t n = got.value();
  if (n == 0) {
    for (size_t c = 0; c < width; ++c) resamplers_[c]->flush(pending_[c]);
    ended_ = true;
    return true;
  }
  if (width == 1) {
    resamplers_[0]->process(in_buf_.data(), n, pending_[0]);
    return true;
  }
  Samples ch(n);
  for (size_t c = 0; c < width; ++c) {
    for (size_t i = 0; i < n; ++i) ch[i] = in_buf_[i * width + c];
    resamplers_[c]->process(ch.data(), n, pending_[c]);
  }
  return true;
}

Result<size_t> RateAdapter::read_impl(float* out, size_t max_frames, bool interleaved) {
  const int mode = interleaved ? 2 : 1;
  const size_t width = interleaved ? static_cast<size_t>(std::max(1, info_.channels)) : 1;
  if (mode_ != mode) {  // first read, or a switch between mono and every channel: restart where we are
    const bool resync = mode_ != 0;
    mode_ = mode;
    make_resamplers(width);
    if (resync) {
      if (auto st = seek(pos_); !st) return st.error();
    }
  }
  auto available = [&] {
    size_t have = pending_[0].size();
    for (size_t c = 1; c < width; ++c) have = std::min(have, pending_[c].size());
    return have;
  };
  auto take = [&](size_t n) {
    for (auto& p : pending_) p.erase(p.begin(), p.begin() + static_cast<std::ptrdiff_t>(std::min(n, p.size())));
  };
  while (drop_ > 0) {  // after a seek: the output before the target
    const size_t d = std::min(available(), static_cast<size_t>(drop_));
    take(d);
    drop_ -= static_cast<int64_t>(d);
    if (drop_ > 0 && !refill(width, interleaved, max_frames)) break;
  }
  while (available() < max_frames && refill(width, interleaved, max_frames)) {
  }
  if (error_) {
    Error e = *error_;
    error_.reset();
    return e;
  }
  const size_t n = std::min(max_frames, available());
  for (size_t c = 0; c < width; ++c)
    for (size_t i = 0; i < n; ++i) out[i * width + c] = pending_[c][i];
  take(n);
  pos_ += static_cast<int64_t>(n);
  return n;
}

Status RateAdapter::seek(int64_t frame) {
  // Restart the filters a little before the target (they start from
  // silence) at an input frame whose time is a whole number of output
  // frames: a multiple of in / gcd(in, out), which exists for integral
  // rates. The output up to the target is dropped.
  const double out_rate = info_.native_rate_hz;
  const double preroll_in = std::ceil(0.05 * in_rate_hz_);
  int64_t f0 = std::max<int64_t>(0, static_cast<int64_t>(std::floor(static_cast<double>(frame) * in_rate_hz_ / out_rate - preroll_in)));
  const auto in_i = static_cast<int64_t>(in_rate_hz_), out_i = static_cast<int64_t>(out_rate);
  if (static_cast<double>(in_i) == in_rate_hz_ && static_cast<double>(out_i) == out_rate && in_i > 0 && out_i > 0) {
    const int64_t step = in_i / std::gcd(in_i, out_i);
    f0 = f0 / step * step;
  }
  if (auto st = inner_->seek(f0); !st) return st;
  for (auto& r : resamplers_) r->reset();
  for (auto& p : pending_) p.clear();
  ended_ = false;
  pos_ = frame;
  drop_ = std::max<int64_t>(0, std::llround(static_cast<double>(frame) - static_cast<double>(f0) * out_rate / in_rate_hz_));
  return ok_status();
}

}  // namespace godwit
