// Verification of one airing: the score profile of the master, segment by
// segment, against the audio at the detected offset.
//
// Each segment (default 1 s) of the master is scored alone (Pearson) against
// the aligned segment of the airing. A segment "aired" when its score
// reaches max(min_segment_score, relative * p90), where p90 is the 90th
// percentile of the profile: a cut-off airing has a run of segments near 0
// where the programme replaced it. Coverage is the aired fraction of the
// master's length; the missing parts are listed as ranges within the master.
//
// Thread contract: plain functions and values.
#pragma once

#include <utility>
#include <vector>

#include "godwit/types.h"

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
