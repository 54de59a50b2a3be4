// Fuzz target: start times from file names (civil_time.h), as the drop
// folder, `locate` and `reconcile` read them, and ISO 8601 local times, as
// the planned log and --start give them.
//
// Input: a file name, optionally followed by a NUL byte and a pattern
// (else the default %Y%m%dT%H%M%S and two others are tried).
//
// Checked beyond crashes and sanitizer findings (outside reference: ISO
// 8601-1 extended format, the same as the tests' Python datetime):
//   - a time found in a name, written by format_iso8601_local with 0 to 6
//     decimals, reads back through parse_iso8601_local within half a unit
//     of its last digit (plus the double's rounding at that magnitude),
//     and its text has the fixed shape YYYY-MM-DDTHH:MM:SS[.f...] (unless
//     it rounds past 9999-12-31T23:59:59, where four-digit years end);
//   - a name that parses as ISO 8601 round-trips the same way;
//   - what format_iso8601_local writes, read_written_date_time (the planned
//     log's reader) reads as the same local time, without an offset;
//   - read_written_date_time on the name itself: a time it reads has an
//     offset within 18 hours and as many fraction digits as it can hold,
//     and written back without the offset round-trips the same way;
//   - a time from a name is a whole second of a year 0000-9999.
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <string>
#include <vector>

#include "godwit/compliance/civil_time.h"

using namespace godwit;

namespace {

[[noreturn]] void fail(const std::string& what) {
  std::fprintf(stderr, "name_time_fuzz: %s\n", what.c_str());
  std::abort();
}

bool iso_shape(const std::string& s, int decimals) {
  const std::string shape = "dddd-dd-ddTdd:dd:dd";
  if (s.size() != shape.size() + (decimals ? 1 + size_t(decimals) : 0)) return false;
  for (size_t i = 0; i < s.size(); ++i) {
    const char want = i < shape.size() ? shape[i] : (i == shape.size() ? '.' : 'd');
    if (want == 'd' ? !(s[i] >= '0' && s[i] <= '9') : s[i] != want) return false;
  }
  return true;
}

constexpr double kYear0 = -62167219200.0, kYear10000 = 253402300800.0;  // 0000-01-01, 10000-01-01

void check_round_trip(LocalSeconds t, const std::string& from) {
  for (int d = 0; d <= 6; ++d) {
    // ISO 8601's basic years end at 9999: a time that rounds past them
    // (9999-12-31T23:59:59.9 at 0 decimals) has no text to round-trip.
    if (std::round(t * std::pow(10.0, d)) / std::pow(10.0, d) >= kYear10000) continue;
    const std::string text = format_iso8601_local(t, d);
    if (!iso_shape(text, d)) fail("format_iso8601_local(" + from + ", " + std::to_string(d) + ") gave " + text);
    const auto back = parse_iso8601_local(text);
    if (!back) fail("format_iso8601_local's text does not parse: " + text + " (from " + from + ")");
    const double tolerance = 0.5 * std::pow(10.0, -d) + std::fabs(t) * 4e-16 + 1e-9;
    if (!(std::fabs(*back - t) <= tolerance))
      fail("round trip of " + from + " at " + std::to_string(d) + " decimals: " + text);
    const DateTimeReading written = read_written_date_time(text);
    if (!written.ok() || written.time.utc_offset_s || !(std::fabs(written.time.wall - *back) <= 1e-6))
      fail("read_written_date_time reads format_iso8601_local's " + text + " otherwise");
  }
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  const std::string in(reinterpret_cast<const char*>(data), size);
  const size_t nul = in.find('\0');
  const std::string name = in.substr(0, nul);
  std::vector<std::string> patterns;
  if (nul != std::string::npos) patterns.push_back(in.substr(nul + 1));
  else patterns = {"%Y%m%dT%H%M%S", "%Y-%m-%d_%H-%M-%S", "%H%M%%%d%m%Y"};
  for (const auto& pattern : patterns) {
    if (const auto t = time_from_name(name, pattern)) {
      if (!(*t >= kYear0 && *t < kYear10000) || *t != std::floor(*t)) fail("a name's time out of range: " + name);
      check_round_trip(*t, name);
    }
  }
  if (const auto t = parse_iso8601_local(name)) check_round_trip(*t, name);
  const DateTimeReading written = read_written_date_time(name);
  if (written.ok()) {
    if (written.time.utc_offset_s && std::abs(*written.time.utc_offset_s) > 18 * 3600) fail("an offset over 18 h: " + name);
    if (written.time.fraction_digits < 0 || written.time.fraction_digits > 9) fail("fraction digits out of range: " + name);
    // The last microseconds of 9999 round to 10000-01-01 in a double.
    if (written.time.wall >= kYear0 && written.time.wall <= kYear10000) check_round_trip(written.time.wall, name);
    else fail("a written time outside years 0000-9999: " + name);
  } else if (written.fault == DateTimeFault::none) {
    fail("not ok without a fault");
  }
  return 0;
}
