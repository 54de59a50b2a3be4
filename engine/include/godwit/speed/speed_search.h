// Speed search: airings played faster or slower than their master.
//
// A resampling chain (a film-rate conversion speeds material up by 25/24,
// about 4.2 %, common practice in 25 fps regions, from memory), a playout
// system squeezing a break, or two clocks that disagree change an airing's
// duration and pitch together. The plain correlation cannot see such an
// airing: over a 30 s spot a 0.1 % error drifts 30 ms, against a peak a
// fraction of a millisecond wide. The search runs beside it in three
// steps, each one coherent over the residual error the previous one left:
//
//  1. Coarse: band-energy envelopes (16 bands, 20 frames/s) of the
//     recording, read on a grid of speeds (each speed stretches the
//     recording's time axis and scales its band edges), each correlated
//     with every master's envelope (normalized, all bands at once). Grid
//     steps are set so that a master's ends drift under 3/4 of a frame.
//  2. Envelope refinement at 50 frames/s on a fine grid of speeds and
//     offsets around each coarse peak.
//  3. Sample level: the master resampled at that speed is cut into short
//     segments; where each lands (sub-sample) gives, by a robust line fit,
//     the speed and the offset; twice, with longer segments the second
//     time. The detection's score is then the ordinary normalized
//     correlation of the whole master resampled at the fitted speed, and
//     it must reach the same threshold as a plain detection.
//
// Tempo changes with the pitch kept (a time-stretcher) share step 1: their
// envelopes are the master's, time-scaled, at nearly the same band edges.
// Each coarse peak is also tried as a tempo change (tempo_refiner.h:
// envelopes with the band edges in place, 32 ms segments with a consensus
// line, a confirmation against the master aligned frame by frame,
// calibrated by a null alignment); it becomes a Match with `tempo` != 1
// and `speed` 1 when no speed fits, or when it beats the speed fit's score
// by 0.2 (search/speed_refinement.cc). A fit is a tempo change only when
// the envelopes match at least as well with the band edges in place as
// shifted by the tempo (the spectrum did not move), a speed change only
// when the resampled master's waveform matches: the two kinds are told
// apart.
//
// Detections that the plain search already made (same master, overlapping
// in time) are left to it; so are those whose fitted speed is within
// `unit_tolerance` of 1.
#pragma once

namespace godwit {

struct SpeedOptions {
  bool enabled = true;          // Default: on
  // Speeds searched: 1/(1+d) .. 1+d. Default 4.5 %: 4 % and the film-rate
  // change 25/24 (4.17 %) either way, with room for the clock error on top.
  double max_deviation = 0.045;
  // Coarse peaks: envelope correlation at least this, and `floor_k`
  // robust deviations above its local floor. Defaults: 0.3 and 5 (ours;
  // on the speed and accuracy benchmarks they let through every airing
  // within the targets and a few peaks per master and hour of programme,
  // which the final correlation rejects).
  double coarse_threshold = 0.3;
  double coarse_floor_k = 5.0;
  // At most this many coarse peaks per master and hour are refined (the
  // strongest): a bound on the cost for audio that resembles a master
  // everywhere. Default: 60, one a minute.
  double max_candidates_per_hour = 60;
  // The head of each master (this fraction of it, from its first sample)
  // is searched as an envelope of its own, so that an airing cut short
  // (at the end of a break, a recording or by a gap) is as visible to
  // the coarse step as a whole one. Masters shorter than
  // `head_min_s` have none. Defaults: 0.5, so that every airing with
  // half of its master or more, from the start, holds the whole head; and
  // 6 s (ours). 0 turns heads off.
  double head_fraction = 0.5;
  double head_min_s = 6.0;
  // A fitted speed closer than this to 1 is a plain airing. Default 2e-5
  // (0.6 ms over 30 s).
  double unit_tolerance = 2e-5;
  // Tempo changes (pitch kept) searched: 1/(1+d) .. 1+d; the coarse grid
  // spans the larger of this and `max_deviation`. Default 5 %: what a
  // playout system squeezes a break by (common practice, from memory).
  // 0 turns the tempo fit off.
  double max_tempo_deviation = 0.05;
};

}  // namespace godwit
