#include "godwit/compliance/civil_time.h"

#include <unicode/ucal.h>
#include <unicode/uenum.h>
#include <unicode/ustring.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <memory>

namespace godwit {
namespace {

bool digits(std::string_view s, size_t pos, size_t n, int& out) {
  if (pos + n > s.size()) return false;
  int v = 0;
  for (size_t i = pos; i < pos + n; ++i) {
    if (s[i] < '0' || s[i] > '9') return false;
    v = v * 10 + (s[i] - '0');
  }
  out = v;
  return true;
}

std::optional<LocalSeconds> compose(int y, int mo, int d, int h, int mi, int s, double frac) {
  using namespace std::chrono;
  const year_month_day ymd{year{y}, month{static_cast<unsigned>(mo)}, day{static_cast<unsigned>(d)}};
  if (!ymd.ok() || h > 23 || mi > 59 || s > 59) return std::nullopt;
  const auto days = sys_days{ymd}.time_since_epoch().count();
  return static_cast<double>(days) * 86400.0 + h * 3600.0 + mi * 60.0 + s + frac;
}

bool is_digit(char c) { return c >= '0' && c <= '9'; }

// Reads "hh:mm[:ss[(.|,)f...]]" (extended) or "hhmm[ss[(.|,)f...]]" (basic)
// at `pos`; false when the text there is not of that form.
bool read_time_of_day(std::string_view t, size_t& pos, bool extended, int& h, int& mi, int& s, double& frac,
                      int& frac_digits) {
  s = 0;
  frac = 0;
  frac_digits = 0;
  if (!digits(t, pos, 2, h)) return false;
  pos += 2;
  if (extended) {
    if (pos >= t.size() || t[pos] != ':') return false;
    ++pos;
  }
  if (!digits(t, pos, 2, mi)) return false;
  pos += 2;
  const bool colon = extended && pos < t.size() && t[pos] == ':';
  const bool more = colon || (!extended && pos + 1 < t.size() && is_digit(t[pos]));
  if (!more) return true;  // no seconds: hh:mm
  if (colon) ++pos;
  if (!digits(t, pos, 2, s)) return false;
  pos += 2;
  if (pos < t.size() && (t[pos] == '.' || t[pos] == ',')) {
    ++pos;
    double scale = 0.1;
    while (pos < t.size() && is_digit(t[pos])) {
      if (++frac_digits > 9) return false;
      frac += (t[pos] - '0') * scale;
      scale /= 10;
      ++pos;
    }
    if (frac_digits == 0) return false;
  }
  return true;
}

// Z, +hh:mm, +hhmm, +hh (or -) from `pos` to the end; `ok_range` false when
// the offset is of that form but over 18:00 or its minutes over 59.
bool read_offset(std::string_view t, size_t pos, int& offset_s, bool& ok_range) {
  ok_range = true;
  if (t.size() - pos == 1 && (t[pos] == 'Z' || t[pos] == 'z')) {
    offset_s = 0;
    return true;
  }
  if (t[pos] != '+' && t[pos] != '-') return false;
  const int sign = t[pos] == '-' ? -1 : 1;
  int hh = 0, mm = 0;
  const size_t n = t.size() - pos - 1;
  if (!digits(t, pos + 1, 2, hh)) return false;
  if (n == 5) {
    if (t[pos + 3] != ':' || !digits(t, pos + 4, 2, mm)) return false;
  } else if (n == 4) {
    if (!digits(t, pos + 3, 2, mm)) return false;
  } else if (n != 2) {
    return false;
  }
  ok_range = mm <= 59 && hh * 60 + mm <= 18 * 60;
  offset_s = sign * (hh * 3600 + mm * 60);
  return true;
}

const char* const kMonthNames[] = {"January", "February", "March",     "April",   "May",      "June",
                                   "July",    "August",   "September", "October", "November", "December"};

std::string why_no_such_date(int y, int mo, int d) {
  using namespace std::chrono;
  if (mo < 1 || mo > 12) return "month " + std::to_string(mo) + " does not exist";
  if (d < 1) return "day 0 does not exist";
  const auto days_in_month =
      static_cast<unsigned>(year_month_day_last{year{y} / month{static_cast<unsigned>(mo)} / std::chrono::last}.day());
  return std::string(kMonthNames[mo - 1]) + " has " + std::to_string(days_in_month) + " days in " + std::to_string(y);
}

std::u16string to_utf16(std::string_view s) {
  std::u16string out(s.size() + 1, u'\0');
  int32_t n = 0;
  UErrorCode st = U_ZERO_ERROR;
  u_strFromUTF8(reinterpret_cast<UChar*>(out.data()), static_cast<int32_t>(out.size()), &n, s.data(),
                static_cast<int32_t>(s.size()), &st);
  if (U_FAILURE(st)) return {};
  out.resize(static_cast<size_t>(n));
  return out;
}

bool same_ignoring_ascii_case(std::string_view a, std::string_view b) {
  return a.size() == b.size() && std::equal(a.begin(), a.end(), b.begin(), [](char x, char y) {
           auto low = [](char c) { return c >= 'A' && c <= 'Z' ? static_cast<char>(c - 'A' + 'a') : c; };
           return low(x) == low(y);
         });
}

// True when ICU knows `id` as a zone of the tz database (not a custom id).
bool is_system_zone(std::string_view id) {
  const std::u16string u = to_utf16(id);
  if (u.empty()) return false;
  UChar canonical[128];
  UBool system = false;
  UErrorCode st = U_ZERO_ERROR;
  ucal_getCanonicalTimeZoneID(reinterpret_cast<const UChar*>(u.data()), static_cast<int32_t>(u.size()), canonical,
                              128, &system, &st);
  return U_SUCCESS(st) && system;
}

}  // namespace

DateTimeReading read_written_date_time(std::string_view t) {
  DateTimeReading r;
  int y, mo, d, h, mi, s, frac_digits;
  double frac;
  size_t pos;
  bool extended;
  if (t.size() >= 10 && t[4] == '-' && t[7] == '-') {
    if (!digits(t, 0, 4, y) || !digits(t, 5, 2, mo) || !digits(t, 8, 2, d)) return r;
    pos = 10;
    extended = true;
  } else if (t.size() >= 8) {
    if (!digits(t, 0, 4, y) || !digits(t, 4, 2, mo) || !digits(t, 6, 2, d)) return r;
    pos = 8;
    extended = false;
  } else {
    return r;
  }
  if (pos >= t.size() || !(t[pos] == 'T' || t[pos] == 't' || t[pos] == ' ')) return r;
  ++pos;
  if (!read_time_of_day(t, pos, extended, h, mi, s, frac, frac_digits)) return r;
  std::optional<int> offset;
  bool offset_in_range = true;
  if (pos < t.size()) {
    int o = 0;
    if (!read_offset(t, pos, o, offset_in_range)) return r;
    offset = o;
  }
  using namespace std::chrono;
  const year_month_day ymd{year{y}, month{static_cast<unsigned>(mo)}, day{static_cast<unsigned>(d)}};
  if (!ymd.ok()) {
    r.fault = DateTimeFault::invalid_date;
    r.detail = why_no_such_date(y, mo, d);
    return r;
  }
  if (h > 23 || mi > 59 || s > 59) {
    r.fault = DateTimeFault::invalid_time;
    return r;
  }
  if (!offset_in_range) {
    r.fault = DateTimeFault::invalid_offset;
    return r;
  }
  r.fault = DateTimeFault::none;
  r.time.wall = *compose(y, mo, d, h, mi, s, frac);
  r.time.utc_offset_s = offset;
  r.time.fraction_digits = frac_digits;
  return r;
}

Result<TimeZone> TimeZone::find(std::string_view name) {
  auto unknown = [&] {
    return Error{ErrorCode::usage,
                 "unknown time zone '" + std::string(name) +
                     "': give the station's IANA time zone name, such as Europe/Berlin or America/New_York",
                 "", std::nullopt};
  };
  if (name.empty() || name.size() > 64) return unknown();
  if (is_system_zone(name)) return TimeZone(std::string(name));
  // The tz database's names differ only in letter case from none other:
  // europe/berlin means Europe/Berlin.
  UErrorCode st = U_ZERO_ERROR;
  std::unique_ptr<UEnumeration, void (*)(UEnumeration*)> all(ucal_openTimeZones(&st), uenum_close);
  if (U_FAILURE(st)) return unknown();
  for (;;) {
    int32_t n = 0;
    const char* id = uenum_next(all.get(), &n, &st);
    if (U_FAILURE(st) || !id) break;
    if (same_ignoring_ascii_case(std::string_view(id, static_cast<size_t>(n)), name) && is_system_zone(id))
      return TimeZone(std::string(id, static_cast<size_t>(n)));
  }
  return unknown();
}

double TimeZone::utc_offset_at(double utc_s) const {
  const std::u16string id = to_utf16(name_);
  UErrorCode st = U_ZERO_ERROR;
  std::unique_ptr<UCalendar, void (*)(UCalendar*)> cal(
      ucal_open(reinterpret_cast<const UChar*>(id.data()), static_cast<int32_t>(id.size()), "", UCAL_GREGORIAN, &st),
      ucal_close);
  if (U_FAILURE(st)) return 0;  // find() accepted the name: ICU opens it
  ucal_setMillis(cal.get(), std::floor(utc_s * 1000.0), &st);
  const int32_t zone_ms = ucal_get(cal.get(), UCAL_ZONE_OFFSET, &st);
  const int32_t dst_ms = ucal_get(cal.get(), UCAL_DST_OFFSET, &st);
  if (U_FAILURE(st)) return 0;
  return (zone_ms + dst_ms) / 1000.0;
}

std::string TimeZone::rules_version() {
  UErrorCode st = U_ZERO_ERROR;
  const char* v = ucal_getTZDataVersion(&st);
  return U_SUCCESS(st) && v ? v : "unknown";
}

std::optional<LocalSeconds> parse_iso8601_local(std::string_view t) {
  int y, mo, d, h, mi, s;
  size_t pos;
  if (t.size() >= 19 && t[4] == '-' && t[7] == '-' && t[10] == 'T' && t[13] == ':' && t[16] == ':') {
    if (!digits(t, 0, 4, y) || !digits(t, 5, 2, mo) || !digits(t, 8, 2, d) || !digits(t, 11, 2, h) ||
        !digits(t, 14, 2, mi) || !digits(t, 17, 2, s))
      return std::nullopt;
    pos = 19;
  } else if (t.size() >= 15 && t[8] == 'T') {
    if (!digits(t, 0, 4, y) || !digits(t, 4, 2, mo) || !digits(t, 6, 2, d) || !digits(t, 9, 2, h) ||
        !digits(t, 11, 2, mi) || !digits(t, 13, 2, s))
      return std::nullopt;
    pos = 15;
  } else {
    return std::nullopt;
  }
  double frac = 0;
  if (pos < t.size() && (t[pos] == '.' || t[pos] == ',')) {
    ++pos;
    double scale = 0.1;
    size_t n = 0;
    while (pos < t.size() && t[pos] >= '0' && t[pos] <= '9' && n < 9) {
      frac += (t[pos] - '0') * scale;
      scale /= 10;
      ++pos;
      ++n;
    }
    if (n == 0) return std::nullopt;
  }
  if (pos != t.size()) return std::nullopt;  // zone designators and trailing text
  return compose(y, mo, d, h, mi, s, frac);
}

std::string format_iso8601_local(LocalSeconds t, int decimals) {
  using namespace std::chrono;
  decimals = std::max(0, std::min(6, decimals));
  const double scale = std::pow(10.0, decimals);
  const double rounded = std::round(t * scale) / scale;
  const double whole = std::floor(rounded);
  const auto days = static_cast<long>(std::floor(whole / 86400.0));
  long secs = static_cast<long>(whole - static_cast<double>(days) * 86400.0);
  const year_month_day ymd{sys_days{std::chrono::days{days}}};
  char buf[64];
  std::snprintf(buf, sizeof buf, "%04d-%02u-%02uT%02ld:%02ld:%02ld", static_cast<int>(ymd.year()),
                static_cast<unsigned>(ymd.month()), static_cast<unsigned>(ymd.day()), secs / 3600, (secs / 60) % 60,
                secs % 60);
  std::string out = buf;
  if (decimals > 0) {
    const long frac = std::lround((rounded - whole) * scale);
    char f[16];
    std::snprintf(f, sizeof f, ".%0*ld", decimals, frac);
    out += f;
  }
  return out;
}

std::optional<LocalSeconds> time_from_name(std::string_view name, std::string_view pattern) {
  for (size_t start = 0; start < name.size(); ++start) {
    int f[6] = {1970, 1, 1, 0, 0, 0};  // Y m d H M S
    size_t p = start;
    bool ok = true;
    for (size_t i = 0; i < pattern.size() && ok; ++i) {
      if (pattern[i] == '%' && i + 1 < pattern.size()) {
        const char c = pattern[++i];
        const char* fields = "YmdHMS";
        const char* hit = c ? std::char_traits<char>::find(fields, 6, c) : nullptr;
        if (c == '%') {
          ok = p < name.size() && name[p] == '%';
          ++p;
        } else if (hit) {
          const size_t width = c == 'Y' ? 4 : 2;
          ok = digits(name, p, width, f[hit - fields]);
          p += width;
        } else {
          ok = false;  // unsupported conversion
        }
      } else {
        ok = p < name.size() && name[p] == pattern[i];
        ++p;
      }
    }
    if (!ok) continue;
    if (auto t = compose(f[0], f[1], f[2], f[3], f[4], f[5], 0.0)) return t;
  }
  return std::nullopt;
}

}  // namespace godwit
