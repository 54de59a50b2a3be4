// Foreground contrast: did the airing carry the master's foreground (its
// voice), or only what lies under it (its music bed)?
//
// A music bed aired alone, or a presenter talking over it, correlates with
// the master about as well as the whole spot does through a hard air chain
// (0.4-0.5 against 0.45-0.65 on the benchmark), so a score alone cannot
// tell them apart. Their difference is where the match fails: per band of
// a short-time spectrum, the master's loud moments (its foreground, 6 dB or
// more above the band's median) are its voice on top of the bed. In a real
// airing those moments match at least as well as the quiet ones (noise,
// codecs and compression hurt quiet moments more); with the bed alone they
// match far worse, because what made them loud is missing.
//
// contrast = mean over bands of (match over foreground frames - match over
// background frames), each match a normalized cross-spectrum with each
// bin's phase taken from all frames (so any fixed EQ, and polarity, leave
// it unchanged). Near 0 or above: the foreground aired. Clearly negative:
// only the background did.
//
// Spectral shape match: the same frames seen another way. Per band, the
// log of the band's share of its frame's energy is followed over time in
// the master and in the airing, and the two tracks are correlated (Pearson
// over the frames, mean over the bands). Shares do not move with the
// frame's level, so a compressor leaves them be, and a fixed EQ only adds a
// constant per band; what moves them is what is said and played: the
// master's voice moves its formants from syllable to syllable. A music bed
// aired alone, or with another voice over it, tracks the master's bed but
// not its voice (0.20-0.58 on the benchmark's study days, seeds 71 and 81
// with a hard negative in every programme stretch), where airings track it
// at 0.39-0.99; at low SNR an airing's shape match falls, but its foreground
// contrast then rises (its loud moments stand above the noise), so the
// confirmation judges their sum (reconcile_job.h, min_foreground_evidence).
//
// Crossfades: frames within `edge_s` of the ends of `[use_from, use_to)`
// are left out (a spot faded into the next item loses its foreground
// there first, which is not evidence that it never had it).
//
// Thread contract: plain function; FFT plans from the caller's FftPlans.
#pragma once

#include <optional>
#include <vector>

#include "search/fft_plans.h"
#include "godwit/core/types.h"

namespace godwit::detail {

struct ForegroundContrast {
  double contrast = 0;  // mean of fg - bg over the bands used
  double foreground = 0, background = 0;
  size_t bands = 0;     // bands with enough foreground and background frames
  double shape_match = 0;  // mean over bands of the share tracks' Pearson (above)
};

// `master` and `airing` at rate_hz, aligned (airing starts at the master's
// first sample, already at the speed it aired at); frames are used only
// inside segments flagged in `aired` (segment_s long; all when empty).
// Empty when too few bands have both kinds of frames (a master without
// foreground, such as steady music, gives no evidence either way).
// Frames are used only between use_from and use_to (samples; the aired
// part), less edge_s at each end while at least 3 * edge_s remain.
std::optional<ForegroundContrast> foreground_contrast(FftPlans& plans, const Samples& master, const Samples& airing,
                                                      double rate_hz, const std::vector<bool>& aired, double segment_s,
                                                      size_t use_from, size_t use_to, double edge_s);

}  // namespace godwit::detail
