// Retention of the store of record: a station's rows of days older than
// its retention are deleted, a week of days per transaction, oldest first
// (a crash leaves each day's rows all there or all gone, and never a newer
// day pruned before an older one); the write lock is taken per transaction.
//
// For a station kept `days` days, with `today` its local date at `now_utc`
// (in its time zone as stored, else UTC), the cut is local midnight
// starting day today - days; then, of that station:
//   placements  planned before the cut;
//   detections  aired before the cut, and those of recordings below;
//   recordings  that ended before the cut (start + duration), with their
//               searches (so a day run again is searched again);
//   jobs        that no row names any more (a job's masters, which stay,
//               name the latest job that wrote them: that job stays too).
// Masters stay (a few rows per spot). Recordings whose start was not known
// are kept with their searches. `days` <= 0: the
// station is kept for ever.
//
// Thread contract: plain functions; RecordStore is safe for concurrent use.
#pragma once

#include <cstdint>
#include <map>
#include <string>
#include <vector>

#include "record_store.h"

namespace godwit {

struct RetentionPolicy {
  double days = 400;                     // every station's, unless named below
  std::map<std::string, double> station_days;  // by station name
};

struct RetentionCounts {
  std::string station;
  std::string cut;  // the first local date kept, YYYY-MM-DD
  int64_t placements = 0, detections = 0, recordings = 0, searches = 0, jobs = 0;
  double seconds = 0;  // the station's pass, its transactions together
  int64_t total() const { return placements + detections + recordings + searches + jobs; }
};

// Applies `policy` to every station in the store. Returns one entry per
// station with a finite retention, whether or not anything went. Errors:
// io (that transaction is rolled back; what was committed before stays).
Result<std::vector<RetentionCounts>> apply_retention(RecordStore& store, const RetentionPolicy& policy,
                                                     int64_t now_utc);

}  // namespace godwit
