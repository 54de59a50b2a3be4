// Local civil date-times (ISO 8601, no time zone), as the planned log and
// the loggers' file names give them.
//
// A time is carried as `LocalSeconds`: seconds since 1970-01-01T00:00:00 of
// the same local clock (no zone, no leap seconds), as a double so that
// millisecond evidence survives arithmetic. Daylight-saving changes are not
// modelled: a station's log and its logger share one local clock.
//
// Thread contract: plain functions.
#pragma once

#include <optional>
#include <string>
#include <string_view>

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

}  // namespace godwit
