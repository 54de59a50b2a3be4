// The planned log: which spot should air when, and how far off it may be.
//
// Read as traffic systems write it:
//
// - CSV with RFC 4180 quoting (a field in double quotes may hold the
//   delimiter; "" is a quote), one record per line (no line break inside
//   quotes), UTF-8 with or without a byte order mark (UTF-16 is refused:
//   save as UTF-8). Lines that are empty, start with `#`, or hold only
//   empty fields (`;;;`, as spreadsheets export blank rows) are skipped.
// - The delimiter is sniffed from the header line: comma, semicolon or tab,
//   whichever splits it into the most known column names (ties: the most
//   columns, then that order).
// - Column names are compared without letter case and surrounding spaces,
//   and space, `-` and `_` inside a name are the same (`Spot ID` = spot_id).
//   Any column order; other columns are ignored. Names accepted:
//
//     field     required  names
//     slot      yes       slot, slot_id, id, placement, placement_id, event_id
//     spot      yes       spot, spot_id, master, copy, copy_id, cart, cart_id
//     planned   yes       planned, planned_at, planned_time, time, air_time, airtime,
//                         datetime, date_time, scheduled, scheduled_at, scheduled_time,
//                         start, start_time
//     window_s  no        window_s, window, window_seconds, tolerance, tolerance_s
//
//   Two columns naming one field (`time` and `Air Time`) are a usage error
//   naming both.
// - `planned` is a date and time as read_written_date_time (civil_time.h)
//   reads them: `2026-03-14T06:15:00`, `2026-03-14 06:15`, fractions after
//   `.` or `,`, basic `20260314T061500`. A time with a UTC offset or `Z`
//   names an instant, converted to the station's local wall time in
//   `PlannedLogOptions::zone`; without a zone such a row is rejected. A time
//   without an offset is the station's local time as written.
// - `window_s` (seconds, 0 to 86400) may be absent or empty: the default
//   applies. In a semicolon- or tab-separated log it may use a decimal
//   comma (`30,5`), as the locales that write such files do.
//
// Every row must have as many fields as the header. A row that cannot be
// used is reported with its line number and exactly why; the other rows
// still count.
//
// Thread contract: plain functions and values.
#pragma once

#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "godwit/compliance/civil_time.h"
#include "godwit/core/error.h"

namespace godwit {

struct Placement {
  std::string slot;         // unique placement id
  std::string spot;         // spot id (master file stem)
  std::string planned;      // the local date-time planned, ISO 8601 (`2026-03-14T06:15:00`, the fraction as written)
  LocalSeconds planned_s = 0;
  double window_s = 0;      // allowed deviation either way, >= 0
  size_t line = 0;          // 1-based line in the log
  std::string planned_as_written;        // the log's own text (`2026-03-14 05:15Z`)
  std::optional<int> written_utc_offset_s;  // the UTC offset it carried, seconds east; empty: local time
};

struct LogProblem {
  size_t line = 0;
  std::string reason;
};

struct PlannedLog {
  std::vector<Placement> placements;  // in file order
  std::vector<LogProblem> problems;
  char delimiter = ',';               // as sniffed from the header
  size_t header_line = 0;             // 0: no header (an empty log)
};

struct PlannedLogOptions {
  double default_window_s = 60;        // for rows whose window_s is absent or empty
  std::optional<TimeZone> zone;        // the station's: times written with a UTC offset are converted to it
  // How the person reading a problem sets the zone, named in the reason of
  // a row whose time has an offset while no zone is set.
  std::string zone_setting = "--time-zone";
};

// Errors: usage when the header lacks slot, spot or planned, names one of
// them twice, or has an unterminated quote, and for UTF-16 text (nothing
// can be read then). Everything else is a per-row problem. A log without a
// single valid row is returned as such (see require_placements).
Result<PlannedLog> parse_planned_log(std::string_view csv, const PlannedLogOptions& options);
// The same without a zone.
Result<PlannedLog> parse_planned_log(std::string_view csv, double default_window_s);

// no_placements when `log` holds no placement (an empty log, a header
// alone, or every row rejected), its message giving the first reasons.
Status require_placements(const PlannedLog& log);

// Splits one CSV record at `delimiter` (no line break inside quotes is
// supported by the log format), trimming spaces and tabs around each
// field. Returns false on an unterminated quote.
bool split_csv_line(std::string_view line, std::vector<std::string>& fields, char delimiter = ',');

}  // namespace godwit
