// Screening: a cheap first pass that says where the exact search must look.
//
// The recording and the masters are correlated at a low rate first (the
// same normalized correlation, at `rate_hz`, 1 kHz by default: an eighth of
// the samples of the 8 kHz analysis rate, so about an eighth of the FFT
// work). Every peak there that reaches `threshold` and `floor_k` robust
// deviations above the local floor (peak_picker.h, with the segments and
// spans scaled to the rate) is a candidate; the exact normalized
// correlation at the analysis rate then runs only around candidates, over
// the span the exact peak picker needs to judge them (its noise floor looks
// about 4 s each way), and its candidates are exactly those the full
// search would pick there. The exact search over the whole recording stays
// the reference (`enabled = false`, `--no-screen`). A screen at more than
// half the analysis rate would save little: the full search runs instead.
//
// What the screen can lose: an airing whose low band (below rate_hz / 2)
// matches under `threshold` though its whole band clears the exact
// threshold. On the air-chain benchmark's two study days (seeds 71 and 81,
// 218 airings through compound air chains, 77 hard negatives) every result
// was the same with and without it (docs/performance.md, "Screening");
// the defaults were set before that run, not tuned on it.
#pragma once

namespace godwit {

struct ScreenOptions {
  bool enabled = true;
  double rate_hz = 1000;  // Default: 1000 Hz.
  double threshold = 0.1;
  double floor_k = 5.0;
};

}  // namespace godwit
