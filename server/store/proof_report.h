// Proof of performance: one advertiser's (or one spot's) placements over a
// date range, per station, ordered against aired, read from the store of
// record, as one JSON document (the TCP op `proof` returns it; the page and
// the CSV are made from it, proof_page.h and proof_files.h):
//
//   proof       what was asked (advertiser or spot, from, to), when and by
//               which godwit version the document was made
//   stations[]  per station, in name order:
//     placements  every placement in the range, by planned time, with its
//                 verdict and, when it aired, the airing's time, version,
//                 deviation, coverage, loudness, score, recording (path and
//                 SHA-256) and offset; `owed` marks those still owed
//     unscheduled the advertiser's airings nobody planned
//     owed        slots of the placements owed: missing, partial,
//                 wrong_version, not_recorded
//     totals      counts by verdict, owed, unscheduled
//     recordings  every recording of the station overlapping the range
//                 (path, start, duration, rate, codec, SHA-256): the
//                 evidence searched, including where nothing aired
//   totals_by_spot_day  per station, day and planned spot: the counts
//   totals      over everything
//   cautions    detections are evidence to verify by listening; loudness
//               is indicative, deferring to local regulation and certified
//               measurement
//
// Thread contract: plain functions on a connection the caller owns.
#pragma once

#include <nlohmann/json.hpp>
#include <string>

#include "godwit/compliance/civil_time.h"
#include "sqlite_db.h"

namespace godwit {

struct ProofQuery {
  std::string advertiser;  // exactly one of advertiser and spot
  std::string spot;
  LocalSeconds from_local = 0, to_local = 0;  // [from, to)
  std::string from_text, to_text;             // as asked, for the heading
};

// The verdicts that leave a placement owed.
bool is_owed(const std::string& status);

// `made` is the time the caller's clock tells (shown as is). Errors:
// usage (neither or both of advertiser and spot, to before from), io.
Result<nlohmann::json> build_proof(SqliteDb& db, const ProofQuery& q, const std::string& made);

}  // namespace godwit
