// The stations a daemon serves: each with its drop folder, planned logs,
// library, file-name pattern and time zone (config/godwitd.toml, [[stations]]).
//
// Two ways to write them:
//   [[stations]] tables, each with a `name` (required, unique), `drop`
//   (required, a folder of its own), and optionally `schedules`, `library`,
//   `name_pattern`, `time_zone` and `retention_days`; a key left out takes
//   the top-level one (`library`, `name_pattern`, `time_zone`), except
//   `schedules` and `drop`, which are never shared.
//   The top-level `drop` (and `schedules`, `library`, `time_zone`,
//   `name_pattern`, `station`), as before stations existed: one station.
//   Without `station` it has no name of its own and the store of record
//   names it from its recordings' file names (reconcile_record.h), as it
//   always did.
// Both at once is an error (which `drop` is whose?).
//
// Thread contract: plain values and functions.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "godwit/core/error.h"

namespace godwit {

// The engine's default file-name pattern (ReconcileOptions::name_pattern).
inline constexpr const char* kDefaultNamePattern = "%Y%m%dT%H%M%S";

struct StationConfig {
  // Unique among the stations; empty only for the top-level station when
  // `station` is not set (named by its files, see above).
  std::string name;
  std::string drop;       // incoming/, work/, results/, done/, failed/ (created when missing)
  std::string schedules;  // planned logs (<...YYYY-MM-DD...>.csv); empty: no daily reconciliation
  std::string library;    // its masters; as written: empty takes the top-level one
  std::string name_pattern;  // where a recording's start time is in its name; as written: empty takes the top-level one
  std::string time_zone;  // IANA; empty: none (planned times with an offset are rejected); as written: the top-level one
  // Detections and placements of days older than this are deleted from
  // the store of record; empty: the store's `retention.detections_days`.
  std::optional<double> retention_days;
};

// A station name as the store and the job ids carry it: 1 to 64 letters,
// digits, '-', '_' or '.', not starting with '.'. Errors: usage, saying so.
Status check_station_name(const std::string& name);

// A file-name pattern must hold %Y, %m, %d and %H (a day and an hour to
// file the recording under). Errors: usage.
Status check_name_pattern(const std::string& pattern);

// Checks the effective stations before anything starts: names unique and
// plain, a drop folder each and no two the same (or one inside another),
// no schedules folder shared (a day's log is found by its date alone),
// libraries and schedules folders that exist, known time zones, usable
// patterns and retention. Errors: usage, naming the station and the key.
Status check_stations(const std::vector<StationConfig>& stations);

}  // namespace godwit
