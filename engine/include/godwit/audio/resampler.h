// Resampler: streaming mono sample-rate conversion through libsoxr.
//
// Output is time-aligned with the input: output sample j stands for time
// j / out_rate_hz from the first input sample (libsoxr's linear-phase
// filters absorb their delay; tests/engine/audio/resampler_test.cc checks it). Equal
// rates pass samples through untouched.
//
// Thread contract: one per stream; not safe for concurrent use.
#pragma once

#include <memory>

#include "godwit/core/types.h"

namespace godwit {

class Resampler {
 public:
  Resampler(double in_rate_hz, double out_rate_hz);
  ~Resampler();
  Resampler(const Resampler&) = delete;
  Resampler& operator=(const Resampler&) = delete;

  // Converts `n` input samples, appending the output to `out`.
  void process(const float* in, size_t n, Samples& out);
  // Drains what the filter still holds (call once at the end of a stream).
  void flush(Samples& out);
  // Ready for a new stream, without rebuilding the filter.
  void reset();

  double in_rate_hz() const { return in_rate_hz_; }
  double out_rate_hz() const { return out_rate_hz_; }

 private:
  struct Impl;
  double in_rate_hz_;
  double out_rate_hz_;
  std::unique_ptr<Impl> impl_;
};

// Converts a whole buffer at once (for masters and short spans).
Samples resample_all(const Samples& in, double in_rate_hz, double out_rate_hz);

}  // namespace godwit
