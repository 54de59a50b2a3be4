// Documents of a reconciliation: JSON (other tools read it; keep the
// names) and CSV (one row per placement, then one per unscheduled airing).
//
// JSON: {"placements": [{"slot", "spot", "planned", "window_s", "status",
//                        and when an airing was assigned: "aired", "deviation_s",
//                        "score", "coverage", "detected_spot", "recording",
//                        "offset_s", "polarity", "missing": [[from_s, to_s]],
//                        "versions": [{"spot", "score"}],
//                        with excerpts: "excerpt": {"file", "from_s", "duration_s", "bytes"},
//                        "master_excerpt": file; with sidecar metadata: "advertiser", "title"}],
//        "unscheduled": [{"spot", "aired", "score", "coverage", "recording", "offset_s", "polarity"}],
//        "summary": {"aired": n, "early": n, ..., "unscheduled": n},
//        "recordings": [...], "timeline_issues": [...], "log_problems": [...],
//        "families": [[ids]], "cautions": [text]}
// Times are ISO 8601 local with milliseconds.
#pragma once

#include <nlohmann/json.hpp>
#include <string>

#include "godwit/report/excerpt.h"
#include "godwit/compliance/reconcile_job.h"

namespace godwit {

// `listening`, when excerpts were made (excerpt.h), adds each airing's
// "excerpt" and "master_excerpt" (file names relative to the report) and
// "excerpt_problems".
nlohmann::json reconcile_to_json(const ReconcileResult& r, const LoudnessOptions& loudness = {},
                                 const Listening* listening = nullptr);
std::string reconcile_to_csv(const ReconcileResult& r);

// The spot to report as detected for a placement: the placement's own when
// the airing's version is undetermined among siblings that include it.
const std::string& reported_spot(const AiringRecord& airing, const Placement& placement);

// The cautions every report carries.
extern const char* const kEvidenceCaution;
extern const char* const kLoudnessCaution;

}  // namespace godwit
