#include "godwit/audio/analysis_stream.h"

#include "core/wall_timer.h"

namespace godwit {

AnalysisStream::AnalysisStream(AudioSource& source, double analysis_rate_hz, size_t block_frames)
    : source_(source),
      resampler_(source.info().native_rate_hz, analysis_rate_hz),
      native_(block_frames) {}

Result<bool> AnalysisStream::next(Samples& out) {
  out.clear();
  if (done_) return false;
  Result<size_t> got = size_t{0};
  {
    detail::WallTimer timed(decode_s_);
    got = source_.read(native_.data(), native_.size());
  }
  detail::WallTimer timed(resample_s_);
  if (!got) {
    // Keep what the filter holds: those samples are real audio.
    resampler_.flush(out);
    done_ = true;
    return got.error();
  }
  const size_t n = got.value();
  native_read_ += static_cast<int64_t>(n);
  if (n == 0) {
    resampler_.flush(out);
    done_ = true;
  } else {
    resampler_.process(native_.data(), n, out);
  }
  return !done_ || !out.empty();
}

Samples read_native_span(AudioSource& source, int64_t start, size_t frames) {
  Samples span(frames, 0.0f);
  size_t got = 0;
  if (start < 0) {  // before the recording began: silence
    got = std::min(frames, static_cast<size_t>(-start));
    start = 0;
  }
  if (got < frames && source.seek(start)) {
    while (got < frames) {
      auto r = source.read(span.data() + got, frames - got);
      if (!r || r.value() == 0) break;
      got += r.value();
    }
  }
  span.resize(got);
  return span;
}

Result<Samples> decode_all(AudioSource& source, double rate_hz) {
  Samples native;
  Samples block(1 << 16);
  for (;;) {
    auto got = source.read(block.data(), block.size());
    if (!got) return got.error();
    if (got.value() == 0) break;
    native.insert(native.end(), block.begin(), block.begin() + static_cast<long>(got.value()));
  }
  const double native_rate = source.info().native_rate_hz;
  if (rate_hz <= 0 || rate_hz == native_rate) return native;
  return resample_all(native, native_rate, rate_hz);
}

}  // namespace godwit
