// The history query: stored airings (detections) with their evidence and
// verdicts, in time order, paged.
//
// Filters: a station (else all), a spot (the version detected) or an
// advertiser (its master's, when the job ran), and [from, to) on each
// station's local clock. A page holds at most `limit` airings after
// `cursor`; `next_cursor` is set when more remain. The cursor is the last
// airing's (time, id), so pages neither repeat nor skip airings even while
// jobs are written (an airing a later job adds before the cursor is not
// shown; rerun the query to see it).
//
// Indexes (schema 2): detections by (station, time), (spot, time),
// (advertiser, time) and time; placements by detection.
//
// Thread contract: plain functions on a connection the caller owns.
#pragma once

#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <vector>

#include "godwit/compliance/civil_time.h"
#include "sqlite_db.h"

namespace godwit {

struct AiringsQuery {
  std::string station;     // empty: every station
  std::string spot;        // empty: any
  std::string advertiser;  // empty: any (spot and advertiser are exclusive)
  LocalSeconds from_local = 0, to_local = 0;  // [from, to)
  size_t limit = 1000;     // 1 .. kMaxAiringsPage
  std::string cursor;      // from the previous page; empty: the first
};
constexpr size_t kMaxAiringsPage = 10000;

struct AiringRow {
  int64_t id = 0;
  std::string station;
  LocalSeconds aired_local = 0;
  std::string spot, advertiser, title;
  std::string recording, recording_sha256;
  double offset_s = 0, score = 0, speed = 1, tempo = 1, coverage = 0, length_s = 0;
  int polarity = 1;
  std::optional<double> foreground_contrast, spot_lufs, programme_lufs;
  nlohmann::json missing, not_recorded, versions, undetermined;
  // The verdict of the placement it served, or "unscheduled".
  std::string status;
  std::string slot, planned_spot, planned;
  std::optional<double> deviation_s;
  std::string job;
};

struct AiringsPage {
  std::vector<AiringRow> airings;
  std::string next_cursor;  // empty: this was the last page
};

// Errors: usage (an unknown station, a bad cursor or limit, both spot and
// advertiser, to before from), io.
Result<AiringsPage> query_airings(SqliteDb& db, const AiringsQuery& q);

// One airing as JSON (the `airings` op and `godwit airings --format json`).
nlohmann::json airing_to_json(const AiringRow& a);
// CSV: the header line and one line per airing (RFC 4180, CRLF).
std::string airings_csv_header();
std::string airing_to_csv(const AiringRow& a);

// --from/--to of the history commands: a date (YYYY-MM-DD: from its
// start; as `to`, through its end) or a local date-time. Empty on anything
// else.
std::optional<LocalSeconds> parse_range_start(const std::string& text);
std::optional<LocalSeconds> parse_range_end(const std::string& text);

}  // namespace godwit
