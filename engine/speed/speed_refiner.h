// Speed refinement of one coarse peak (steps 2 and 3 of speed_search.h).
//
// Given the master and a span of the recording, both at the analysis rate,
// and a coarse speed and offset, finds the speed and the offset of the
// master's first sample, and scores the whole master resampled at that
// speed against the span (Pearson, as the plain search scores).
//
// Thread contract: plain function; `plans` is shared safely.
#pragma once

#include <optional>

#include "search/fft_plans.h"
#include "spectral_frames.h"
#include "godwit/core/types.h"

namespace godwit::detail {

struct SpeedFit {
  double speed = 1;      // the airing plays `speed` times faster than the master
  double offset = 0;     // span samples to the master's first sample
  double score = 0;      // signed, in [-1, 1]
  int polarity = 1;
  size_t segments = 0;   // segments that agreed with the final line fit
};

struct SpeedSeed {
  double speed = 1;
  double offset = 0;        // span samples
  double speed_step = 0.005; // spacing of the coarse grid around `speed` (relative)
};

std::optional<SpeedFit> refine_speed(FftPlans& plans, const Samples& master, const Samples& span, double rate_hz,
                                     const SpeedSeed& seed, const EnvelopeBands& bands);

// The master as it airs at `speed` (duration / speed, pitch * speed), at
// the same rate.
Samples at_speed(const Samples& master, double rate_hz, double speed);

}  // namespace godwit::detail
