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
  // Kept search results that read a recording the record does not name
  // are kept this long (prune_kept_results): the day of a drop folder's
  // hour is reconciled soon after it is located. Default 1.
  double unnamed_results_days = 1;
};

struct RetentionCounts {
  std::string station;
  std::string cut;  // the first local date kept, YYYY-MM-DD
  int64_t placements = 0, detections = 0, recordings = 0, searches = 0, jobs = 0;
  double seconds = 0;  // the station's pass, its transactions together
  int64_t total() const { return placements + detections + recordings + searches + jobs; }
};

// What is kept for reuse (stored_tasks.h) and that nothing will read again,
// deleted (after apply_retention, whose deletions it follows):
//   search_results  searches and evidence stored more than `unnamed_days`
//                   before `now_utc` that read a recording (by SHA-256,
//                   search_result_files) no recording row names: its days
//                   were deleted, or it was never recorded (a drop folder's
//                   hour whose day has no planned log); with their file rows;
//   file_digests    whose SHA-256 no recording or master names and whose
//                   path no longer holds that file (gone, or another device,
//                   inode, size or modification time).
// Results kept before schema 5 name no recording and stay; families stay
// (one row per library and options). Errors: io (rolled back).
struct KeptRetentionCounts {
  int64_t results = 0, result_files = 0, digests = 0;
  int64_t total() const { return results + result_files + digests; }
};
Result<KeptRetentionCounts> prune_kept_results(RecordStore& store, double unnamed_days, int64_t now_utc);

// Applies `policy` to every station in the store. Returns one entry per
// station with a finite retention, whether or not anything went. Errors:
// io (that transaction is rolled back; what was committed before stays).
Result<std::vector<RetentionCounts>> apply_retention(RecordStore& store, const RetentionPolicy& policy,
                                                     int64_t now_utc);

}  // namespace godwit
