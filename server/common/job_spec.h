// JobSpec: a job as a type, parsed once where it enters (a prepared job
// from the journal, a task from the queue) and checked in one place.
//
// The three kinds a daemon runs:
//   LocateSpec     {"kind": "locate", "templates": [paths], "recordings": [paths],
//                   "threshold", "floor_k", "fft_size", "max_speed_change_pct", "max_tempo_change_pct",
//                   "screen"?}
//   ReconcileSpec  {"kind": "reconcile", "library", "schedule", "recordings", "window_s",
//                   "time_zone"?, "station"?, "name_pattern"?, "excerpts"?, "max_speed_change_pct",
//                   "max_tempo_change_pct", "screen"?}
//   SegmentSpec    {"kind": "segment", "segment": {...}, "templates": [paths], "evidence"?,
//                   and the search fields}: one task of a distributed job (task_plan.h)
// job_spec_to_json writes exactly these (the journal and the queue carry
// them as JSON text, and a task's id hashes its text); job_spec_from_json
// reads them back, checking every field's type and range (the ranges and
// defaults below are the only ones). A request's job is turned into a
// prepared LocateSpec or ReconcileSpec by JobRunner::prepare (paths under
// the roots, library expanded, inline spots saved); the drop folder builds
// its specs as types and checks them the same way (check_job_spec), and so
// does the command line (godwit locate and reconcile: their search flags
// land in a SearchFields, with the ranges and defaults below).
//
// Thread contract: plain values and functions.
#pragma once

#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <string_view>
#include <variant>
#include <vector>

#include "godwit/core/error.h"
#include "godwit/search/job.h"
#include "segment_task.h"

namespace godwit {

// The speed range searched by default, in percent: the engine's
// (SpeedOptions::max_deviation), for the command line and the daemon alike.
constexpr double kDefaultMaxSpeedChangePct = 100 * SpeedOptions{}.max_deviation;
// The tempo range (time-stretched airings, pitch kept) searched by
// default, in percent: the engine's (SpeedOptions::max_tempo_deviation).
constexpr double kDefaultMaxTempoChangePct = 100 * SpeedOptions{}.max_tempo_deviation;
// A planned placement's window when the log states none. Default: 60 s.
constexpr double kDefaultWindowS = 60;

// The range of a number field, both ends allowed. The ones below are the
// only ones: the daemon's JSON fields (job_spec_from_json) and the command
// line's flags (server/cli/engine_options.cc) are checked against them.
struct NumberRange {
  double lo, hi;
};
inline constexpr NumberRange kThresholdRange{0.05, 1.0};       // |r| a match must reach
inline constexpr NumberRange kFloorKRange{0.0, 1000.0};        // MADs above the noise floor
inline constexpr NumberRange kFftSizeRange{0.0, double(1 << 24)};  // and 0 or a power of two
inline constexpr NumberRange kSpeedChangePctRange{0.0, 10.0};  // 0 turns the speed search off
inline constexpr NumberRange kTempoChangePctRange{0.0, 10.0};  // 0 turns the tempo fit off
inline constexpr NumberRange kWindowSRange{0.0, 86400.0};      // a placement's allowed deviation

// The search options a job states; absent ones are the engine's defaults.
struct SearchFields {
  std::optional<double> threshold;   // kThresholdRange (PickerOptions::threshold)
  std::optional<double> floor_k;     // kFloorKRange (PickerOptions::floor_k)
  std::optional<size_t> fft_size;    // 0 (chosen per template) or a power of two up to 2^24
  double max_speed_change_pct = kDefaultMaxSpeedChangePct;  // kSpeedChangePctRange
  double max_tempo_change_pct = kDefaultMaxTempoChangePct;  // kTempoChangePctRange
  // The screened search (screen_options.h); empty: the engine's default.
  std::optional<bool> screen;
  // Onto the daemon's options (threads, planner, callbacks stay).
  void apply(LocateOptions& options) const;
};

struct LocateSpec {
  std::vector<std::string> templates;
  std::vector<std::string> recordings;
  SearchFields search;
};

struct ReconcileSpec {
  std::string library;   // folder of masters (and their sidecars)
  std::string schedule;  // the planned log
  std::vector<std::string> recordings;
  double window_s = kDefaultWindowS;
  std::string time_zone;          // empty: none (the daemon's was applied at prepare)
  // The station the store of record files the job under; empty: named by
  // the recordings' file names (reconcile_record.h).
  std::string station;
  // Where a recording's start time is in its name; empty: the engine's
  // (ReconcileOptions::name_pattern).
  std::string name_pattern;
  std::optional<bool> excerpts;   // empty: the daemon's setting
  SearchFields search;            // only max_speed_change_pct, max_tempo_change_pct and screen are stated
};

struct SegmentSpec {
  Segment segment;
  std::vector<std::string> templates;
  bool evidence = false;  // gather each detection's evidence beside the audio
  SearchFields search;
};

using JobSpec = std::variant<LocateSpec, ReconcileSpec, SegmentSpec>;

// "locate", "reconcile", "segment".
std::string_view job_kind(const JobSpec& spec);

// Errors: bad_request, naming the field and what it must be.
Result<JobSpec> job_spec_from_json(const nlohmann::json& j);
nlohmann::json job_spec_to_json(const JobSpec& spec);
// The ranges of a spec built in code (the drop folder's, the command
// line's): as from_json.
Status check_job_spec(const JobSpec& spec);

// A number field of a request: absent gives `dflt`; else it must be a
// number in `range`. The one reader of the ranges above.
Result<double> number_field(const nlohmann::json& j, const char* field, NumberRange range, double dflt);
// The search fields of a request or spec, checked.
Result<SearchFields> search_fields_from_json(const nlohmann::json& j);

}  // namespace godwit
