// Reconciler: verdicts for planned placements from verified airings.
//
// Assignment (stable, documented in README "Verdicts"): every pair of a
// placement and an airing of the same spot or of a sibling, with the airing
// within `horizon_s` of the planned time, is a candidate. Candidates are
// taken greedily in this order: inside the window before outside, same
// spot before sibling, smaller |deviation|, earlier planned time, slot id,
// earlier airing. Each placement takes at most one airing and each airing
// serves at most one placement.
//
// Verdict of a placement with an airing, first that applies:
//   wrong_version  the airing is a sibling's (and not undetermined among them)
//   partial        coverage < partial_below
//   early / late   deviation outside -window_s .. +window_s
//   aired
// and `missing` without one. Airings serving no placement are unscheduled.
//
// Thread contract: plain functions and values.
#pragma once

#include <functional>
#include <optional>
#include <string>
#include <vector>

#include "godwit/planned_log.h"

namespace godwit {

enum class VerdictStatus { aired, early, late, missing, partial, wrong_version };
const char* verdict_name(VerdictStatus s);

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
  double partial_below = 0.9;  // Default 0.9
  double horizon_s = 3600;     // Default 1 h: farther airings are not this placement's
};

struct Verdict {
  size_t placement = 0;            // index into the placements
  VerdictStatus status = VerdictStatus::missing;
  std::optional<size_t> airing;    // index into the airings
  double deviation_s = 0;          // aired - planned
};

struct Reconciliation {
  std::vector<Verdict> verdicts;    // one per placement, same order
  std::vector<size_t> unscheduled;  // airing indices, by time
};

using SiblingTest = std::function<bool(const std::string& a, const std::string& b)>;

Reconciliation reconcile(const std::vector<Placement>& placements, const std::vector<AiringRef>& airings,
                         const SiblingTest& siblings, const VerdictOptions& options = {});

}  // namespace godwit
