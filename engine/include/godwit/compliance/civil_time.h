// Local civil date-times (ISO 8601, no time zone), as the planned log and
// the loggers' file names give them, and the station's time zone.
//
// A time is carried as `LocalSeconds`: seconds since 1970-01-01T00:00:00 of
// the same local clock (no zone, no leap seconds), as a double so that
// millisecond evidence survives arithmetic. The project's timeline runs on
// the station's local clock: a station's log and its logger share it.
//
// Daylight-saving changes: a planned time written with a UTC offset (or Z)
// names one instant, and `TimeZone` turns it into the station's local wall
// time by the IANA tz rules (through ICU). Both instances of the hour
// repeated when clocks go back become the same local wall times (02:30 CEST
// and 02:30 CET are both 02:30), and no UTC time becomes a local time in
// the hour skipped when clocks go forward. A local time written without an
// offset is taken as written: in the repeated hour it is ambiguous on a
// local clock, for the log and for the logger's file names alike, and
// nothing here can tell its two instances apart.
//
// Thread contract: plain functions and values.
#pragma once

#include <optional>
#include <string>
#include <string_view>

#include "godwit/core/error.h"

namespace godwit {

using LocalSeconds = double;

// Accepts ISO 8601 extended `YYYY-MM-DDTHH:MM:SS` with an optional fraction
// (`.` or `,`, up to 9 digits), and the basic form `YYYYMMDDTHHMMSS`.
// Rejects a zone designator (Z, +hh:mm): the log is in local time. Empty on
// anything invalid (month 13, 24:00:01, February 30).
std::optional<LocalSeconds> parse_iso8601_local(std::string_view text);

// `YYYY-MM-DDTHH:MM:SS.mmm` (decimals 0..6; rounding carries into seconds).
std::string format_iso8601_local(LocalSeconds t, int decimals = 3);

// The first match of a strftime-style `pattern` (%Y %m %d %H %M %S and
// literal characters; %% is a percent sign) anywhere in `name`. Empty when
// nothing in the name matches or the date is invalid.
std::optional<LocalSeconds> time_from_name(std::string_view name, std::string_view pattern);

// A date-time as a planned log writes it: the date and time of day as
// written, and the UTC offset written after them, if any.
struct WrittenDateTime {
  LocalSeconds wall = 0;            // the date and time as written, the offset not applied
  std::optional<int> utc_offset_s;  // seconds east of UTC: Z 0, +02:00 7200, -05 -18000; empty: none written
  int fraction_digits = 0;          // digits of the seconds' fraction as written
};

enum class DateTimeFault {
  none,
  not_a_date_time,  // not one of the forms read_written_date_time accepts
  invalid_date,     // the form is right but the calendar has no such day (February 30, month 13)
  invalid_time,     // hour over 23, minute or second over 59
  invalid_offset,   // a UTC offset over 18 hours, or its minutes over 59
};

struct DateTimeReading {
  DateTimeFault fault = DateTimeFault::not_a_date_time;
  WrittenDateTime time;  // valid when fault == none
  std::string detail;    // for an invalid date: what is wrong with it ("February has 28 days in 2026")
  bool ok() const { return fault == DateTimeFault::none; }
};

// The date-times of planned logs as traffic systems write them (ISO 8601-1
// and RFC 3339 forms, and their common relaxations):
//   date   `YYYY-MM-DD`, or basic `YYYYMMDD` with a basic time
//   then   `T`, `t` or one space
//   time   `hh:mm:ss` or `hh:mm` (seconds 0), basic `hhmmss` or `hhmm`;
//          seconds may carry a fraction after `.` or `,` (1 to 9 digits)
//   offset optional, right after the time: `Z` or `z` (UTC), `+hh:mm`,
//          `+hhmm` or `+hh` (or `-`), at most 18:00
// Nothing else: no time without a date, no date without a time, no space
// before the offset, no zone names or abbreviations (CET, EST).
DateTimeReading read_written_date_time(std::string_view text);

// A station's time zone: the IANA tz database's rules for it, through ICU
// (its built-in tz data; `TimeZone::rules_version()` names the release).
class TimeZone {
 public:
  // `name` is an IANA zone name such as Europe/Berlin or America/New_York
  // (letter case ignored; aliases such as Asia/Calcutta accepted). Errors:
  // usage, for a name ICU does not know as a zone of the tz database
  // (custom ids such as GMT+05:00 included).
  static Result<TimeZone> find(std::string_view name);

  const std::string& name() const { return name_; }  // as the tz database spells it
  // The offset from UTC in force at the UTC instant `utc_s` (seconds since
  // 1970-01-01T00:00:00Z), in seconds east of UTC (daylight saving included).
  double utc_offset_at(double utc_s) const;
  // The station's local wall time at the UTC instant `utc_s`.
  LocalSeconds local_from_utc(double utc_s) const { return utc_s + utc_offset_at(utc_s); }
  // The release of the tz database ICU carries ("2022e").
  static std::string rules_version();

 private:
  explicit TimeZone(std::string name) : name_(std::move(name)) {}
  std::string name_;
};

}  // namespace godwit
