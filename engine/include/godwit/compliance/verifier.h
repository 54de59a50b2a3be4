// Verification of one airing: the score profile of the master, segment by
// segment, against the audio at the detected offset, and how much of the
// master aired.
//
// Each segment (default 1 s) of the master is scored alone (Pearson) against
// the aligned segment of the airing. A segment is flagged "aired" when its
// score reaches max(min_segment_score, relative * p90), p90 being the 90th
// percentile of the profile (the flags choose the segments that version
// choice and foreground contrast look at).
//
// Coverage is decided on the whole profile, not segment by segment: the
// aired part of an airing is contiguous (a truncation cuts the end, a late
// join cuts the start; a crossfaded edge still aired). In frames of a
// quarter segment, each frame where the master is audible (within 15 dB of
// its median frame energy) is evidence: its score s against the level m
// it would score if it aired and the null level 0. For Gaussian scores of
// equal spread this log-likelihood ratio is proportional to m (s - m/2),
// so the aired part is the interval with the largest sum of it (a
// change-point pair, found exactly); quiet frames weigh nothing and frames
// the recording does not hold weigh against. m is the airing's own level
// mu (the median score of the aired part, estimated twice: from the loud
// frames, then from the interval) times the frame's share of it in noise:
// a frame of the master's power E in noise of power N scores about
// sqrt(E / (E + N)) of its noiseless score, so at a low SNR a quieter
// stretch (a soft ending) scores lower though it aired. N is fitted to the
// interval's scores (least squares over a grid from 0, where every loud
// frame's level is mu, to 16 times the median frame's power), and the
// interval found again with it. The interval is then widened over quiet frames at its edges
// and over up to 2 s of crossfade (frames still scoring mu/8 or more).
// A noisy or band-limited airing scores low everywhere, not only in some
// seconds, so it stays complete; a cut airing drops to the null level.
// Each edge gets a support range: the edge positions whose log-likelihood
// lies within 2 units of the best (with the spread estimated from the
// aired frames), a confidence interval of roughly 95 %.
//
// Thread contract: plain functions and values.
#pragma once

#include <utility>
#include <vector>

#include "godwit/core/types.h"

namespace godwit {

struct VerifyOptions {
  double segment_s = 1.0;
  double min_segment_score = 0.3;
  double relative = 0.5;
};

struct Profile {
  double segment_s = 1.0;
  std::vector<float> scores;  // one per segment; the last may be shorter
  std::vector<bool> aired;
  double coverage = 0;        // 0..1, by duration
  std::vector<std::pair<double, double>> missing_s;  // [from, to) within the master
  // The aired part [aired_from_s, aired_to_s) in master time, each edge
  // with its support range; coverage_range follows from them.
  double aired_from_s = 0, aired_to_s = 0;
  std::pair<double, double> aired_from_range_s{0, 0}, aired_to_range_s{0, 0};
  std::pair<double, double> coverage_range{0, 0};
  double aired_level = 0;     // mu: median score of the aired part's audible frames
};

// `master` and `airing` at the same rate; `airing` starts at the detected
// offset and may be shorter than the master (the recording ended): the
// segments beyond it did not air. `polarity` -1 scores the inverted master.
Profile verify_airing(const Samples& master, const Samples& airing, double rate_hz, int polarity,
                      const VerifyOptions& options = {});

// Mean of `profile.scores` over the segments flagged in `which` (all when
// `which` is empty or flags none).
double mean_over(const Profile& profile, const std::vector<bool>& which);

}  // namespace godwit
