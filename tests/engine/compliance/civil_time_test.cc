// ISO 8601 local date-times. References: ISO 8601-1:2019 (extended and
// basic formats, decimal fraction with comma or full stop); the day counts
// cross-checked against Python's datetime (2026-03-14 is day 20526 since
// 1970-01-01: datetime.date(2026,3,14).toordinal() - date(1970,1,1).toordinal()).
// Planned logs' date-times: ISO 8601-1:2019 and RFC 3339 (a space for the
// T, UTC offsets +hh:mm, +hhmm, +hh and Z). Time zones: the IANA tz
// database via ICU; every expected local time below was cross-checked with
// Python's zoneinfo on Debian's tzdata 2025b, e.g.
// datetime(2026,11,1,5,30,tzinfo=timezone.utc).astimezone(ZoneInfo("America/New_York"))
// is 2026-11-01T01:30:00-04:00, and at 06:30Z 01:30:00-05:00.
#include "godwit/compliance/civil_time.h"

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

TEST_CASE("fractions with full stop or comma, milliseconds survive formatting") {
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

namespace {

LocalSeconds at(const char* iso) { return *parse_iso8601_local(iso); }

// UTC instants are written here as ISO 8601 local times of the UTC clock.
double utc(const char* iso) { return at(iso); }

}  // namespace

TEST_CASE("planned-log date-times: T, t or a space, seconds optional, fractions, basic form") {
  struct Case {
    const char* text;
    const char* same_as;
    int fraction_digits;
  };
  const Case cases[] = {
      {"2026-03-14T06:15:00", "2026-03-14T06:15:00", 0},
      {"2026-03-14t06:15:00", "2026-03-14T06:15:00", 0},
      {"2026-03-14 06:15:00", "2026-03-14T06:15:00", 0},
      {"2026-03-14 06:15", "2026-03-14T06:15:00", 0},
      {"2026-03-14T06:15", "2026-03-14T06:15:00", 0},
      {"2026-03-14 06:15:42.318", "2026-03-14T06:15:42.318", 3},
      {"2026-03-14T06:15:42,5", "2026-03-14T06:15:42.5", 1},
      {"2026-03-14T06:15:42.123456789", "2026-03-14T06:15:42.123456789", 9},
      {"20260314T061500", "2026-03-14T06:15:00", 0},
      {"20260314T0615", "2026-03-14T06:15:00", 0},
      {"20260314 061542.25", "2026-03-14T06:15:42.25", 2},
  };
  for (const auto& c : cases) {
    CAPTURE(c.text);
    const DateTimeReading r = read_written_date_time(c.text);
    REQUIRE(r.ok());
    CHECK(r.time.wall == doctest::Approx(at(c.same_as)).epsilon(1e-15));
    CHECK(!r.time.utc_offset_s.has_value());
    CHECK(r.time.fraction_digits == c.fraction_digits);
  }
}

TEST_CASE("planned-log date-times: Z and UTC offsets in RFC 3339 and ISO 8601 forms") {
  const std::pair<const char*, int> cases[] = {
      {"2026-03-14T05:15:00Z", 0},           {"2026-03-14T05:15:00z", 0},         {"2026-03-14 06:15:00+01:00", 3600},
      {"2026-03-14T07:15+0200", 7200},       {"2026-03-14T00:15:00-05", -18000},  {"2026-03-14T11:00:00+05:45", 20700},
      {"2026-03-14T05:15:00.5-00:00", 0},    {"20260314T051500Z", 0},             {"20260314T0015-0500", -18000},
      {"2026-03-14T19:15:00+14:00", 50400},  {"2026-03-13T17:15:00-12:00", -43200},
  };
  for (const auto& [text, offset] : cases) {
    CAPTURE(text);
    const DateTimeReading r = read_written_date_time(text);
    REQUIRE(r.ok());
    REQUIRE(r.time.utc_offset_s.has_value());
    CHECK(*r.time.utc_offset_s == offset);
  }
  // Each names the same instant, 2026-03-14T05:15:00Z (the one with a fraction half a second later).
  for (const auto& [text, offset] : cases) {
    CAPTURE(text);
    const DateTimeReading r = read_written_date_time(text);
    const double instant = r.time.wall - *r.time.utc_offset_s;
    CHECK(instant - utc("2026-03-14T05:15:00") == doctest::Approx(std::string(text).find(".5") != std::string::npos ? 0.5 : 0));
  }
}

TEST_CASE("planned-log date-times: what is wrong is told apart") {
  const char* not_date_times[] = {
      "",          "yesterday",        "2026-03-14",         "06:15:00",          "2026-03-14T06",
      "14.03.2026 06:15",              "2026-03-14  06:15",  "2026-03-14T06:15:00 +01:00",
      "2026-03-14T06:15:00CET",        "2026-03-14T06:15:00.",  "2026-03-14T06:15.5", "2026-03-14T06:15:00+1",
      "2026-03-14T06:15:00+01:0",      "2026-03-14T06:15:00ZZ", "2026-03-14T061500", "20260314T06:15:00",
      "2026-03-14T06:15:42.1234567891", "2026-3-14T06:15:00",   "2026-03-14X06:15:00"};
  for (const char* t : not_date_times) {
    CAPTURE(t);
    CHECK(read_written_date_time(t).fault == DateTimeFault::not_a_date_time);
  }
  const std::pair<const char*, const char*> bad_dates[] = {
      {"2026-02-30T06:00:00", "February has 28 days in 2026"},
      {"2028-02-30 06:00", "February has 29 days in 2028"},
      {"2026-04-31T06:00:00Z", "April has 30 days in 2026"},
      {"2026-13-01T06:00:00", "month 13 does not exist"},
      {"2026-00-10T06:00:00", "month 0 does not exist"},
      {"2026-03-00T06:00:00", "day 0 does not exist"},
  };
  for (const auto& [t, why] : bad_dates) {
    CAPTURE(t);
    const DateTimeReading r = read_written_date_time(t);
    CHECK(r.fault == DateTimeFault::invalid_date);
    CHECK(r.detail == why);
  }
  for (const char* t : {"2026-03-14T24:00:00", "2026-03-14T25:00", "2026-03-14 06:60", "2026-03-14T23:59:60",
                        "2026-03-14T06:15:61Z"}) {
    CAPTURE(t);
    CHECK(read_written_date_time(t).fault == DateTimeFault::invalid_time);
  }
  for (const char* t : {"2026-03-14T06:15:00+19:00", "2026-03-14T06:15:00+02:60", "2026-03-14T06:15-1801"}) {
    CAPTURE(t);
    CHECK(read_written_date_time(t).fault == DateTimeFault::invalid_offset);
  }
  CHECK(read_written_date_time("2028-02-29 06:00").ok());  // leap year
}

TEST_CASE("time zones by their IANA names (tz database via ICU), unknown names are usage errors") {
  auto berlin = TimeZone::find("Europe/Berlin");
  REQUIRE(berlin.ok());
  CHECK(berlin.value().name() == "Europe/Berlin");
  auto lower = TimeZone::find("america/new_york");
  REQUIRE(lower.ok());
  CHECK(lower.value().name() == "America/New_York");
  CHECK(TimeZone::find("UTC").ok());
  for (const char* bad : {"Europe/Atlantis", "", "Berlin", "GMT+05:00", "+01:00", "CEST"}) {
    CAPTURE(bad);
    auto z = TimeZone::find(bad);
    REQUIRE(!z.ok());
    CHECK(z.error().code == ErrorCode::usage);
    CHECK(z.error().message.find("IANA") != std::string::npos);
  }
  CHECK(!TimeZone::rules_version().empty());
  // Standard and summer offsets of 2026.
  CHECK(berlin.value().utc_offset_at(utc("2026-01-15T12:00:00")) == 3600);
  CHECK(berlin.value().utc_offset_at(utc("2026-07-15T12:00:00")) == 7200);
  CHECK(lower.value().utc_offset_at(utc("2026-01-15T12:00:00")) == -18000);
  CHECK(lower.value().utc_offset_at(utc("2026-07-15T12:00:00")) == -14400);
}

TEST_CASE("the repeated hour: both of its UTC instances become the same local wall times") {
  struct Case {
    const char* zone;
    const char* first_utc;   // an instant in the hour's first (summer-time) instance
    const char* second_utc;  // the same wall time an hour later (standard time)
    const char* local;
  };
  const Case cases[] = {
      {"Europe/Berlin", "2026-10-25T00:30:00", "2026-10-25T01:30:00", "2026-10-25T02:30:00"},
      {"Europe/Berlin", "2026-10-25T00:00:00", "2026-10-25T01:00:00", "2026-10-25T02:00:00"},
      {"Europe/Berlin", "2026-10-25T00:59:59.5", "2026-10-25T01:59:59.5", "2026-10-25T02:59:59.5"},
      {"America/New_York", "2026-11-01T05:30:00", "2026-11-01T06:30:00", "2026-11-01T01:30:00"},
  };
  for (const auto& c : cases) {
    CAPTURE(c.zone);
    CAPTURE(c.first_utc);
    const TimeZone z = TimeZone::find(c.zone).value();
    CHECK(z.local_from_utc(utc(c.first_utc)) == doctest::Approx(at(c.local)).epsilon(1e-15));
    CHECK(z.local_from_utc(utc(c.second_utc)) == doctest::Approx(at(c.local)).epsilon(1e-15));
    CHECK(z.utc_offset_at(utc(c.first_utc)) - z.utc_offset_at(utc(c.second_utc)) == 3600);
  }
  // Minute by minute across Berlin's change, every local wall time of 02:00-02:59 is read twice.
  const TimeZone berlin = TimeZone::find("Europe/Berlin").value();
  int in_repeated_hour = 0;
  for (int m = 0; m < 120; ++m) {
    const LocalSeconds l = berlin.local_from_utc(utc("2026-10-25T00:00:00") + 60.0 * m);
    if (l >= at("2026-10-25T02:00:00") && l < at("2026-10-25T03:00:00")) ++in_repeated_hour;
  }
  CHECK(in_repeated_hour == 120);
}

TEST_CASE("the skipped hour: UTC times around it become local times that skip it") {
  struct Case {
    const char* zone;
    const char* before_utc;  // the last second before the change
    const char* before_local;
    const char* after_local;  // one second later in UTC
    const char* skip_from;    // the local hour that never happens
  };
  const Case cases[] = {
      {"Europe/Berlin", "2026-03-29T00:59:59", "2026-03-29T01:59:59", "2026-03-29T03:00:00", "2026-03-29T02:00:00"},
      {"America/New_York", "2026-03-08T06:59:59", "2026-03-08T01:59:59", "2026-03-08T03:00:00", "2026-03-08T02:00:00"},
  };
  for (const auto& c : cases) {
    CAPTURE(c.zone);
    const TimeZone z = TimeZone::find(c.zone).value();
    const double before = utc(c.before_utc);
    CHECK(format_iso8601_local(z.local_from_utc(before), 0) == c.before_local);
    CHECK(format_iso8601_local(z.local_from_utc(before + 1), 0) == c.after_local);
    // Second by second over the two hours around it: no local time falls in
    // the skipped hour, and the local clock never runs backwards.
    LocalSeconds last = -1e300;
    int in_skipped_hour = 0;
    for (int s = -3600; s <= 3600; ++s) {
      const LocalSeconds l = z.local_from_utc(before + s);
      if (l >= at(c.skip_from) && l < at(c.skip_from) + 3600) ++in_skipped_hour;
      CHECK(l > last);
      last = l;
    }
    CHECK(in_skipped_hour == 0);
  }
}
