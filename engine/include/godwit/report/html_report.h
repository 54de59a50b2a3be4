// The reconciliation as one HTML page that opens offline (no external
// files but, when excerpts were made, the audio in the folder beside it,
// referred to relatively):
//
//   heading     station and day (from the planned log's name), when the
//               report was made and by which godwit version
//   cautions    detections are evidence to verify by listening; loudness
//               is indicative
//   filters     by verdict and by advertiser (a few lines of inline script;
//               no server needed)
//   summary     counts by verdict, in the verdict colours
//   timeline    limited to the recorded time (shaded); planned windows in
//               lanes, detections below, a legend; placements outside the
//               recorded time listed apart
//   advertisers per advertiser: ordered, aired, owed, unverified, unscheduled
//   recordings  each file with its span, rate, channels and error; gaps and
//               overlaps between files
//   placements  every placement with its evidence, the spot's advertiser and
//               title, a plot of its score profile and, with excerpts, a
//               player for the airing and for its master and a picture of
//               the aired part against the master (missing and not
//               recorded ranges marked)
//   unscheduled airings nobody planned, likewise
//   problems    timeline, planned log and excerpt problems
// A print stylesheet lays it out on A4 (players and filters left out).
//
// Element ids and attributes other tools and tests rely on: #cautions,
// #filters (input[name=status][value], select[name=advertiser]), #summary
// (.count[data-status]), #advertisers (tr.advertiser[data-advertiser] with
// td.ordered, .aired, .owed, .unverified, .unscheduled), #recordings
// (tr.recording), #timeline (svg: rect.recorded, g.slot[data-slot]
// [data-status][data-detected], rect.detection[data-status][data-detected],
// <title> tooltips), #legend (.legend-item[data-status] .swatch),
// #outside (li[data-slot]), #placements (tr.placement[data-slot]
// [data-status][data-advertiser], td.detected, audio.aired, audio.master,
// svg.listen), #unscheduled (tr.airing[data-status=unscheduled]).
// Rows a filter hides carry the `hidden` attribute.
//
// Thread contract: plain functions.
#pragma once

#include <string>
#include <vector>

#include "godwit/report/excerpt.h"
#include "godwit/compliance/reconcile_job.h"

namespace godwit {

struct HtmlReportOptions {
  // The planned log's name (its file stem, "kestrel-fm-2026-03-14"): the
  // station is what is left of it without the date.
  std::string title;
  LoudnessOptions loudness;
  // When the report was made, as the caller's clock tells it (e.g.
  // "2026-12-03T05:50:22+01:00"); empty: not stated.
  std::string made;
  // The excerpts beside the report (excerpt.h); null: no players.
  const Listening* listening = nullptr;
};

// Station and day of a report: the planned log's name without its date
// (YYYY-MM-DD or YYYYMMDD anywhere in it), and that date, else the first
// placement's, else the first recording's. Either may be empty.
struct ReportHeading {
  std::string station;
  std::string day;      // YYYY-MM-DD
  std::string weekday;  // "Saturday"
};
ReportHeading report_heading(const std::string& log_name, const ReconcileResult& r);

// The colour of a verdict (or "unscheduled") in every report: our own
// palette, chosen so that all nine stay apart (CIELAB difference of 23 or
// more) for normal vision and under simulated protanopia, deuteranopia and
// tritanopia (tests/e2e/report_test.py checks it).
const char* verdict_colour(const std::string& status);

std::string reconcile_to_html(const ReconcileResult& r, const HtmlReportOptions& options);

// Helpers the other pages share (the proof of performance): text escaped
// for HTML (& < > " '), and the CSS giving each of `statuses` (verdict
// names, "unscheduled") its colour as --c (and dark text, --ink, on the
// light ones) on whatever carries its data-status, with the .chip, .count
// and .swatch classes that wear it.
std::string html_escape(const std::string& s);
std::string verdict_palette_css(const std::vector<std::string>& statuses);

}  // namespace godwit
