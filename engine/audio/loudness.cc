#include "godwit/audio/loudness.h"

#include <ebur128.h>

#include <cmath>
#include <memory>
#include <vector>

namespace godwit {
namespace {

struct MeterDeleter {
  void operator()(ebur128_state* s) const { ebur128_destroy(&s); }
};
using Meter = std::unique_ptr<ebur128_state, MeterDeleter>;

Meter make_meter(int channels, double rate_hz) {
  return Meter(ebur128_init(static_cast<unsigned>(channels), static_cast<unsigned long>(std::lround(rate_hz)),
                            EBUR128_MODE_I));
}

std::optional<double> result(ebur128_state* m) {
  double lufs = 0;
  if (ebur128_loudness_global(m, &lufs) != EBUR128_SUCCESS || !std::isfinite(lufs)) return std::nullopt;
  return lufs;
}

}  // namespace

std::optional<double> integrated_lufs(const float* x, size_t frames, int channels, double rate_hz) {
  Meter m = make_meter(channels, rate_hz);
  if (!m) return std::nullopt;
  if (ebur128_add_frames_float(m.get(), x, frames) != EBUR128_SUCCESS) return std::nullopt;
  return result(m.get());
}

Result<std::optional<double>> measure_span_lufs(AudioSource& src, int64_t start, int64_t frames) {
  const int ch = std::max(1, src.info().channels);
  Meter m = make_meter(ch, src.info().native_rate_hz);
  if (!m) return Error{ErrorCode::internal, "libebur128 could not start", src.info().path, std::nullopt};
  if (auto st = src.seek(std::max<int64_t>(0, start)); !st) return st.error();
  std::vector<float> buf(static_cast<size_t>(16384 * ch));
  int64_t left = frames;
  while (left > 0) {
    auto got = src.read_interleaved(buf.data(), static_cast<size_t>(std::min<int64_t>(16384, left)));
    if (!got) return got.error();
    if (got.value() == 0) break;
    ebur128_add_frames_float(m.get(), buf.data(), got.value());
    left -= static_cast<int64_t>(got.value());
  }
  return result(m.get());
}

}  // namespace godwit
