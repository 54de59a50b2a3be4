// Tempo refinement of one coarse peak: an airing whose duration changed
// while its pitch was kept (a playout system's time-stretcher: overlap-add
// such as WSOLA, or a phase vocoder; speed_search.h).
//
// Such an airing is the master's waveform only within the short windows
// the stretcher copied (tens of milliseconds), each shifted by a few
// milliseconds against any one straight line; its band envelopes are the
// master's, time-scaled, at unchanged frequencies. So:
//
//  1. Envelope refinement at 50 frames/s as for a speed change, but with
//     the band edges left in place (envelope_search.h).
//  2. Segments of 32 ms of the master (at its own pitch) are located in the
//     span within a radius around the predicted place; the consensus line
//     over many of them (fit_line, with a tolerance of the stretcher's
//     jitter) gives the tempo and the offset of the master's first sample.
//  3. Confirmation: the master aligned to the airing frame by frame
//     (aligned_master: each 32 ms frame of the master moved within the
//     jitter tolerance of the line to where it matches best, overlap-added)
//     is scored like a plain airing (Pearson of the whole). The freedom of
//     each frame to move raises what unrelated audio scores; the same
//     alignment of the time-reversed master (same spectrum, same
//     autocorrelation, no match) measures that null level on this very
//     span, and the reported score is (r - r0) / (1 - r0), r0 the null's:
//     about 0 for unrelated audio, close to r for a real airing.
//
// Thread contract: plain functions; `plans` is shared safely.
#pragma once

#include <optional>

#include "search/fft_plans.h"
#include "speed_refiner.h"
#include "spectral_frames.h"
#include "godwit/core/types.h"

namespace godwit::detail {

struct TempoFit {
  double tempo = 1;       // the airing lasts master / tempo, at the master's pitch
  double offset = 0;      // span samples to the master's first sample
  double score = 0;       // calibrated against the null alignment (see above), signed
  double raw_score = 0;   // Pearson of the aligned master, signed
  double null_score = 0;  // the same for the time-reversed master
  int polarity = 1;
  size_t segments = 0;    // segments that agreed with the final line fit
};

// Tempos searched: 1 / (1 + max_deviation) .. 1 + max_deviation.
std::optional<TempoFit> refine_tempo(FftPlans& plans, const Samples& master, const Samples& span, double rate_hz,
                                     const SpeedSeed& seed, const EnvelopeBands& bands, double max_deviation);

// The master as it aired at `tempo` with its pitch kept, aligned to
// `airing` (whose first sample is the master's first sample on air): for
// each 32 ms frame of air time (hop 16 ms, periodic Hann, overlap-added),
// the master's frame around where the line puts it, moved by up to
// `tolerance_s` to where its 64 ms context matches `airing` best (staying
// where the previous frame was unless moving clearly helps), each frame's
// best match signed by `polarity` (-1: the airing is inverted; the result
// is not). Length: that of `airing`, zero where the master has ended. Any
// rate (the track is found at 8 kHz).
Samples aligned_master(FftPlans& plans, const Samples& master, const Samples& airing, double rate_hz, double tempo,
                       double tolerance_s, int polarity);

// The jitter tolerance the tempo fit and the confirmation use. Default
// 12 ms: sox's `tempo` searches 14.68 ms around each overlap (its
// documented default for music), rubberband's phase vocoder keeps
// frames within a few milliseconds.
constexpr double kTempoJitterS = 0.012;

}  // namespace godwit::detail
