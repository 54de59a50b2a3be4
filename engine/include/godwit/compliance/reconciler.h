// Reconciler: verdicts for planned placements from verified airings.
//
// Assignment (documented in README "Verdicts") is optimal, not greedy: a
// minimum-cost matching of placements and airings. A pair is a candidate
// when the airing is of the placement's spot (or undetermined among
// versions including it) or of a sibling, within the placement's horizon
// of its planned time. The cost of a pair orders, first to last: inside
// the window before outside, then the smaller |deviation| (to 10 ms), a
// sibling adding one window to its deviation; equal costs go to the
// earlier planned placement and the earlier airing. (A sibling in the
// window is the slot's airing with the wrong copy, the common playout
// error; the same spot far from its slot is more often another booking.)
// The matching serves as many placements as it can
// and, among those matchings, has the least total cost. Each placement
// takes at most one airing and each airing serves at most one placement.
// The horizon is horizon_windows × window_s + horizon_extra_s (3 × the
// window + 4 minutes by default) unless a fixed horizon_s is set; an
// airing farther away is unscheduled and the placement missing.
//
// Verdict of a placement, first that applies:
//   unknown_spot   the spot is not in the library (with a suggestion when
//                  an id differs only in case or by a small edit)
//   with an airing:
//     wrong_version  the airing is a sibling's (and not undetermined among them)
//     partial        coverage < partial_below
//     early / late   deviation outside -window_s .. +window_s
//     aired
//   without one:
//     not_recorded   part of the span where its airing would be heard
//                    (planned - window_s .. planned + window_s + the
//                    master's length) was not recorded or could not be
//                    read; the verdict lists what was and was not recorded
//     missing
// Airings serving no placement are unscheduled.
//
// Cost: O(k³) per group of placements and airings that can reach each
// other (k placements of one spot family within each other's horizons).
//
// Thread contract: plain functions and values.
#pragma once

#include <functional>
#include <map>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "godwit/compliance/planned_log.h"

namespace godwit {

enum class VerdictStatus { aired, early, late, missing, partial, wrong_version, not_recorded, unknown_spot };
const char* verdict_name(VerdictStatus s);
// Every status in report order (for summaries and legends).
const std::vector<VerdictStatus>& all_verdicts();

struct AiringRef {
  std::string spot;        // the version detected
  LocalSeconds aired_s = 0;
  double coverage = 1.0;
  // When the audio that tells siblings apart did not air (a cut-off
  // airing), every sibling that fits equally: the airing counts as the
  // same spot for a placement of any of them.
  std::vector<std::string> undetermined_among;
};

struct VerdictOptions {
  double partial_below = 0.9;    // Default 0.9
  double horizon_windows = 3;    // Default horizon: 3 × window_s ...
  double horizon_extra_s = 240;  // ... + 4 minutes
  std::optional<double> horizon_s;  // a fixed horizon instead (never under window_s)
  double horizon_for(double window_s) const;
};

// [from, to) on the local clock.
using LocalSpan = std::pair<LocalSeconds, LocalSeconds>;

// What the verdicts may rely on besides the airings.
struct VerdictContext {
  // The library's spot ids with each master's length in seconds. Empty:
  // every spot counts as known, of length 0.
  std::map<std::string, double> library_length_s;
  // The time recorded and read, sorted and disjoint. Empty optional: all
  // time counts as recorded (no not_recorded verdicts).
  std::optional<std::vector<LocalSpan>> recorded;
};

struct Verdict {
  size_t placement = 0;            // index into the placements
  VerdictStatus status = VerdictStatus::missing;
  std::optional<size_t> airing;    // index into the airings
  double deviation_s = 0;          // aired - planned
  // not_recorded: the span where the airing would be heard, split into
  // what was recorded (and held no airing) and what was not.
  std::vector<LocalSpan> recorded, unrecorded;
  // unknown_spot: the library id the log most likely means, if any.
  std::string suggestion;
};

struct Reconciliation {
  std::vector<Verdict> verdicts;    // one per placement, same order
  std::vector<size_t> unscheduled;  // airing indices, by time
};

using SiblingTest = std::function<bool(const std::string& a, const std::string& b)>;

Reconciliation reconcile(const std::vector<Placement>& placements, const std::vector<AiringRef>& airings,
                         const SiblingTest& siblings, const VerdictOptions& options = {},
                         const VerdictContext& context = {});

// The library id `spot` most likely means: one equal but for case, else
// the nearest within an edit distance of 2 (and under a third of its
// length); empty when none is.
std::string suggest_spot(const std::string& spot, const std::map<std::string, double>& library);

// `span` minus `covered` (sorted, disjoint): the parts not covered, and the
// parts covered.
std::pair<std::vector<LocalSpan>, std::vector<LocalSpan>> split_by_cover(const LocalSpan& span,
                                                                         const std::vector<LocalSpan>& covered);

}  // namespace godwit
