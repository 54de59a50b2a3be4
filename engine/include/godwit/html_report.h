// The reconciliation as one self-contained HTML page (no external files,
// opens offline): cautions, summary counts by verdict, an SVG timeline of
// the day (planned slots and their windows against detections), the
// placements with their evidence and a small plot of each detection's
// score profile, unscheduled airings, timeline and log problems.
//
// Element ids other tools and tests rely on: #cautions, #summary (with
// .count[data-status]), #timeline (svg), #placements (tr.placement
// [data-slot][data-status]), #unscheduled (tr.airing).
//
// Thread contract: plain function.
#pragma once

#include <string>

#include "godwit/reconcile_job.h"

namespace godwit {

struct HtmlReportOptions {
  std::string title;  // e.g. "kestrel-fm-2026-03-14"
  LoudnessOptions loudness;
};

std::string reconcile_to_html(const ReconcileResult& r, const HtmlReportOptions& options);

}  // namespace godwit
