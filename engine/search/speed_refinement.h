// Steps 2 and 3 of the speed search (speed_search.h) for the coarse peaks
// of one recording, within a locate job: each peak's span read from the
// recording, fitted as a speed change (speed_refiner.h) and as a tempo
// change with the pitch kept (tempo_refiner.h), and the fits merged with
// the plain detections.
//
// Thread contract: plain functions, called from the job's thread; they run
// the fits on the job's worker threads.
#pragma once

#include <string>
#include <utility>
#include <vector>

#include "godwit/search/job.h"
#include "speed/speed_pass.h"

namespace godwit::detail {

// With the tempo fit on, a plain detection keeps the speed search away
// from its airing only when it scores at least this: a stretcher's copies
// make a tempo-changed airing match the plain correlation in part (0.18 for
// sox's `tempo` at 2 %), and such a detection would hide the airing's tempo
// fit. Ours: above what stretched airings scored plain on the speed and
// accuracy benchmarks (0.18-0.3), below nearly every unchanged airing.
constexpr double kClearPlainScore = 0.5;

// Matches (template index, match) for the peaks that fit; `pad` analysis
// samples of silence preceded the recording in the stream the peaks were
// found in.
std::vector<std::pair<size_t, Match>> refine_speed_candidates(const std::string& path, const TemplateBank& bank,
                                                              const LocateOptions& o,
                                                              const std::vector<SpeedCandidate>& cands, int64_t pad);

// One airing, one match: each fit joins `found`; where a plain detection
// of the same master overlaps it (within half the master), the better
// scoring of the two stays, and a fit within 0.2 % of tempo 1 never
// displaces a plain detection.
void merge_fits(std::vector<std::pair<size_t, Match>>& found, std::vector<std::pair<size_t, Match>> fits,
                const TemplateBank& bank, double rate_hz);

}  // namespace godwit::detail
