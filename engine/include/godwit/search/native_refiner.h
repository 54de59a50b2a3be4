// Offset refinement at a recording's native rate.
//
// The analysis-rate peak locates an airing to about one analysis sample
// (0.125 ms at 8 kHz) after parabolic interpolation. Refinement evaluates
// the Pearson coefficient of the master (resampled to the recording's
// native rate) against the native-rate recording at every native offset of
// a short span around that estimate, takes the best with the expected
// polarity and interpolates that peak too.
//
// Thread contract: plain functions.
#pragma once

#include <cstddef>
#include <optional>

#include "godwit/core/types.h"

namespace godwit {

struct Refinement {
  double offset_frames = 0;  // within `span`, fractional
  double score = 0;          // signed Pearson coefficient at the best offset
};

// Best offset of `tmpl` within `span` (span.size() >= tmpl.size() + 2)
// for the given polarity. Empty when no offset has a score (silence), or
// when the best lies on the span's edge (the estimate was off by more than
// the span allows).
std::optional<Refinement> refine_offset(const Samples& tmpl, const Samples& span, int polarity);

}  // namespace godwit
