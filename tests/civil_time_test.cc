// ISO 8601 local date-times. References: ISO 8601-1:2019 (extended and
// basic formats, decimal fraction with comma or full stop); the day counts
// cross-checked against Python's datetime (2026-03-14 is day 20526 since
// 1970-01-01: datetime.date(2026,3,14).toordinal() - date(1970,1,1).toordinal()).
#include "godwit/civil_time.h"

#include <doctest/doctest.h>

using namespace godwit;

TEST_CASE("extended and basic ISO 8601 forms parse to the same instant") {
  const auto a = parse_iso8601_local("2026-03-14T06:15:00");
  const auto b = parse_iso8601_local("20260314T061500");
  REQUIRE(a.has_value());
  REQUIRE(b.has_value());
  CHECK(*a == *b);
  CHECK(*a == doctest::Approx(20526.0 * 86400 + 6 * 3600 + 15 * 60));
}

TEST_CASE("fractions with full stop or comma; milliseconds survive formatting") {
  CHECK(*parse_iso8601_local("2026-03-14T06:15:42.318") - *parse_iso8601_local("2026-03-14T06:15:42") ==
        doctest::Approx(0.318));
  CHECK(*parse_iso8601_local("2026-03-14T06:15:42,5") - *parse_iso8601_local("2026-03-14T06:15:42") ==
        doctest::Approx(0.5));
  CHECK(format_iso8601_local(*parse_iso8601_local("2026-03-14T06:15:42.318"), 3) == "2026-03-14T06:15:42.318");
  CHECK(format_iso8601_local(*parse_iso8601_local("2026-03-14T23:59:59.9996"), 3) == "2026-03-15T00:00:00.000");
  CHECK(format_iso8601_local(*parse_iso8601_local("1999-12-31T00:00:00"), 0) == "1999-12-31T00:00:00");
}

TEST_CASE("invalid dates, times and zone designators are rejected") {
  for (const char* bad : {"2026-13-01T00:00:00", "2026-02-29T00:00:00", "2026-03-14T24:00:01", "2026-03-14T25:00:00",
                          "2026-03-14T06:60:00", "2026-03-14 06:15:00", "2026-03-14T06:15:00Z",
                          "2026-03-14T06:15:00+01:00", "2026-03-14T06:15", "", "yesterday", "2026-03-14T06:15:00."}) {
    CAPTURE(bad);
    CHECK(!parse_iso8601_local(bad).has_value());
  }
  CHECK(parse_iso8601_local("2028-02-29T00:00:00").has_value());  // leap year
}

TEST_CASE("start times come from a pattern anywhere in a file name") {
  const auto t = time_from_name("kestrel-fm-20260314T060500.flac", "%Y%m%dT%H%M%S");
  REQUIRE(t.has_value());
  CHECK(format_iso8601_local(*t, 0) == "2026-03-14T06:05:00");
  const auto u = time_from_name("logger_2026-03-14_07h00.mp3", "%Y-%m-%d_%Hh%M");
  REQUIRE(u.has_value());
  CHECK(format_iso8601_local(*u, 0) == "2026-03-14T07:00:00");
  CHECK(!time_from_name("no-date-here.wav", "%Y%m%dT%H%M%S").has_value());
  CHECK(!time_from_name("x-20261399T000000.wav", "%Y%m%dT%H%M%S").has_value());
}
