// Segment landing and consensus lines: the sample-level steps of the
// speed and tempo fits (speed_refiner.h, tempo_refiner.h).
//
// A master (as the current estimate says it aired) is cut into short
// segments; each is located by normalized correlation within a small
// radius of where it is predicted in a span; the line that most segments
// agree with then corrects the estimate.
//
// Thread contract: plain functions; `plans` is shared safely.
#pragma once

#include <optional>
#include <utility>
#include <vector>

#include "search/fft_plans.h"
#include "godwit/core/types.h"

namespace godwit::detail {

struct SegmentHit {
  double at = 0;     // segment centre, in resampled-master samples
  double lag = 0;    // where it landed minus where it was predicted, samples
  double score = 0;  // signed peak Pearson
};


// Index of the largest |r[k]|, refined by a parabola through |r| around it.
std::pair<size_t, double> abs_peak(const std::vector<double>& r);

// Normalized correlation of seg (n samples, zero mean, unit norm) with
// every window of win (n + 2R samples), through one FFT product.
void local_ncc(FftPlans& plans, const float* seg, size_t n, const float* win, size_t radius, std::vector<double>& r);

// Where each segment of `m` (the master at the current speed estimate)
// lands in `span`, predicted at span sample offset + u; segments start
// every `step` samples (0: `seg_len`).
std::vector<SegmentHit> land_segments(FftPlans& plans, const Samples& m, const Samples& span, double offset,
                                      size_t seg_len, size_t radius, size_t step = 0);

struct LineFit {
  double a = 0, b = 0;  // lag = a + b * (at - centre)
  double centre = 0;
  size_t used = 0;
  int polarity = 1;
};

// The line lag = a + b (at - centre) that the most segments agree with
// (by squared score, within `tolerance` samples): every pair of clearly
// matching segments proposes a line (among the `max_proposers` best
// scoring ones, 0: all), the best supported one is refitted by weighted
// least squares on its inliers. Segments where the airing was cut off or
// drowned land anywhere; they may be the majority.
std::optional<LineFit> fit_line(const std::vector<SegmentHit>& hits, double min_score, double tolerance,
                                double min_spread, size_t max_proposers = 0);

}  // namespace godwit::detail
