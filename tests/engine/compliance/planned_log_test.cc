// Over 400 lines: one case per way traffic systems write a log; splitting them would scatter the references.
// The planned log as traffic systems write it. Outside references: RFC 4180
// (quoting, fields per record), ISO 8601-1:2019 and RFC 3339 (date-times,
// UTC offsets), the IANA tz database via ICU (Europe/Berlin's 2026 changes,
// cross-checked with Python's zoneinfo on Debian's tzdata 2025b:
// datetime(2026,10,25,0,30,tzinfo=timezone.utc).astimezone(ZoneInfo("Europe/Berlin"))
// is 02:30+02:00, at 01:30Z 02:30+01:00; 2026-03-29 00:59:59Z is 01:59:59+01:00,
// 01:00:00Z is 03:00:00+02:00).
#include "godwit/compliance/planned_log.h"

#include <doctest/doctest.h>

#include <fstream>

#include "reconcile_inputs.h"
#include "test_util.h"

using namespace godwit;

namespace {

LocalSeconds local(const char* iso) { return *parse_iso8601_local(iso); }

PlannedLogOptions berlin() {
  PlannedLogOptions o;
  o.zone = TimeZone::find("Europe/Berlin").value();
  return o;
}

const LogProblem* problem_on(const PlannedLog& log, size_t line) {
  for (const auto& p : log.problems)
    if (p.line == line) return &p;
  return nullptr;
}

bool contains(const std::string& s, const std::string& part) { return s.find(part) != std::string::npos; }

}  // namespace

TEST_CASE("rows parse, bad rows are reported by line with the reason and the rest still count") {
  const char* csv =
      "slot,spot,planned,window_s\r\n"
      "A1,marlow-bakery,2026-03-14T06:15:00,30\r\n"
      "A2,\"tidewater, tyres\",2026-03-14T06:16:00,\r\n"
      "A3,pellham,2026-03-14T25:00:00,30\n"
      "A1,dup,2026-03-14T06:17:00,30\n"
      "A4,x,2026-03-14T06:18:00,-5\n"
      "\n"
      "# a comment\n"
      "A5,y,2026-03-14T06:19:00,abc\n"
      "A6,,2026-03-14T06:19:00,1\n";
  auto r = parse_planned_log(csv, 90);
  REQUIRE(r.ok());
  const auto& log = r.value();
  CHECK(log.delimiter == ',');
  REQUIRE(log.placements.size() == 2);
  CHECK(log.placements[0].window_s == 30);
  CHECK(log.placements[0].planned == "2026-03-14T06:15:00");
  CHECK(log.placements[1].spot == "tidewater, tyres");
  CHECK(log.placements[1].window_s == 90);  // empty: the default
  REQUIRE(log.problems.size() == 5);
  CHECK(log.problems[0].line == 4);
  CHECK(contains(log.problems[0].reason, "invalid time of day"));
  CHECK(log.problems[1].line == 5);
  CHECK(contains(log.problems[1].reason, "line 2"));
  CHECK(log.problems[2].line == 6);
  CHECK(log.problems[3].line == 9);
  CHECK(log.problems[4].line == 10);
}

TEST_CASE("columns in any order, a header without spot is refused") {
  auto r = parse_planned_log("planned,spot,slot\n2026-03-14T06:15:00,a,S\n", 60);
  REQUIRE(r.ok());
  CHECK(r.value().placements[0].slot == "S");
  CHECK(r.value().placements[0].window_s == 60);
  auto bad = parse_planned_log("slot,planned\nS,2026-03-14T06:15:00\n", 60);
  REQUIRE(!bad.ok());
  CHECK(bad.error().code == ErrorCode::usage);
  CHECK(contains(bad.error().message, "lacks the spot id"));
  CHECK(contains(bad.error().message, "spot_id"));  // the names it would have taken
}

TEST_CASE("semicolon-separated log (RFC 4180 quoting kept, decimal comma in window_s)") {
  const char* csv =
      "slot;spot;planned;window_s\n"
      "B1;marlow-bakery;2026-03-14T06:15:00;30,5\n"
      "B2;\"harbour; lights\";2026-03-14T06:16:00;\n"
      "B3;\"say \"\"hi\"\"\";2026-03-14T06:17:00;45\n";
  auto r = parse_planned_log(csv, 60);
  REQUIRE(r.ok());
  const auto& log = r.value();
  CHECK(log.delimiter == ';');
  CHECK(log.problems.empty());
  REQUIRE(log.placements.size() == 3);
  CHECK(log.placements[0].window_s == 30.5);
  CHECK(log.placements[1].spot == "harbour; lights");
  CHECK(log.placements[1].window_s == 60);
  CHECK(log.placements[2].spot == "say \"hi\"");
  CHECK(log.placements[2].planned_s == local("2026-03-14T06:17:00"));
}

TEST_CASE("tab-separated log") {
  const char* csv =
      "Slot\tSpot\tPlanned\tWindow_s\n"
      "C1\tpellham-garden-centre\t2026-03-14 06:02:00\t30\n"
      "C2\tkestrel-fm-id\t2026-03-14 06:07:00\t\n";
  auto r = parse_planned_log(csv, 60);
  REQUIRE(r.ok());
  CHECK(r.value().delimiter == '\t');
  REQUIRE(r.value().placements.size() == 2);
  CHECK(r.value().placements[0].spot == "pellham-garden-centre");
  CHECK(r.value().placements[0].window_s == 30);
  CHECK(r.value().placements[1].window_s == 60);
  CHECK(r.value().problems.empty());
}

TEST_CASE("the sniffed delimiter is the one that splits the header into known names, not the most frequent") {
  // A comma log whose extra column's name holds more semicolons than the header has commas.
  auto r = parse_planned_log("slot,spot,planned,\"notes; free; text; here; and; more\"\nS1,a,2026-03-14T06:00:00,x\n", 60);
  REQUIRE(r.ok());
  CHECK(r.value().delimiter == ',');
  CHECK(r.value().placements.size() == 1);
  // A header read with none of the delimiters says how it was read.
  auto bad = parse_planned_log("slot|spot|planned\nS1|a|2026-03-14T06:00:00\n", 60);
  REQUIRE(!bad.ok());
  CHECK(bad.error().code == ErrorCode::usage);
  CHECK(contains(bad.error().message, "1 column(s) separated by comma"));
}

TEST_CASE("header names: letter case, surrounding spaces, and space, - and _ alike") {
  const char* csv =
      "  SLOT ID ; Spot-Id ;AIR   TIME;  Tolerance_S \n"
      "D1;marlow-bakery;2026-03-14T06:00:30;15\n";
  auto r = parse_planned_log(csv, 60);
  REQUIRE(r.ok());
  REQUIRE(r.value().placements.size() == 1);
  const auto& p = r.value().placements[0];
  CHECK(p.slot == "D1");
  CHECK(p.spot == "marlow-bakery");
  CHECK(p.planned == "2026-03-14T06:00:30");
  CHECK(p.window_s == 15);
}

TEST_CASE("every alias of the documented table names its field") {
  struct Case {
    const char* name;
    int field;  // 0 slot, 1 spot, 2 planned, 3 window_s
  };
  const Case aliases[] = {
      {"slot", 0},        {"slot_id", 0},        {"id", 0},           {"placement", 0},     {"placement_id", 0},
      {"event_id", 0},    {"spot", 1},           {"spot_id", 1},      {"spot id", 1},       {"master", 1},
      {"copy", 1},        {"copy_id", 1},        {"cart", 1},         {"cart_id", 1},       {"planned", 2},
      {"planned_at", 2},  {"planned_time", 2},   {"time", 2},         {"air_time", 2},      {"airtime", 2},
      {"datetime", 2},    {"date_time", 2},      {"scheduled", 2},    {"scheduled_at", 2},  {"scheduled_time", 2},
      {"start", 2},       {"start_time", 2},     {"window_s", 3},     {"window", 3},        {"window_seconds", 3},
      {"tolerance", 3},   {"tolerance_s", 3},
  };
  const char* plain[] = {"slot", "spot", "planned", "window_s"};
  const char* values[] = {"E1", "marlow-bakery", "2026-03-14T06:00:30", "12"};
  for (const auto& a : aliases) {
    CAPTURE(a.name);
    std::string header, row;
    for (int f = 0; f < 4; ++f) {
      header += std::string(f ? "," : "") + (f == a.field ? a.name : plain[f]);
      row += std::string(f ? "," : "") + values[f];
    }
    auto r = parse_planned_log(header + "\n" + row + "\n", 60);
    REQUIRE(r.ok());
    REQUIRE(r.value().placements.size() == 1);
    const auto& p = r.value().placements[0];
    CHECK(p.slot == "E1");
    CHECK(p.spot == "marlow-bakery");
    CHECK(p.planned_s == local("2026-03-14T06:00:30"));
    CHECK(p.window_s == 12);
  }
}

TEST_CASE("two columns naming one field are a usage error naming both") {
  auto r = parse_planned_log("slot,spot,time,notes,Air Time\nS1,a,2026-03-14T06:00:00,x,2026-03-14T06:00:00\n", 60);
  REQUIRE(!r.ok());
  CHECK(r.error().code == ErrorCode::usage);
  CHECK(contains(r.error().message, "column 3 'time'"));
  CHECK(contains(r.error().message, "column 5 'Air Time'"));
  auto same = parse_planned_log("slot;spot;spot_id;planned\n", 60);
  REQUIRE(!same.ok());
  CHECK(contains(same.error().message, "'spot' and column 3 'spot_id'"));
}

TEST_CASE("date and time with a space, without seconds, with fractions after . or ,") {
  const char* csv =
      "slot,spot,planned\n"
      "F1,a,2026-03-14 06:15:00\n"
      "F2,a,2026-03-14 06:16\n"
      "F3,a,2026-03-14T06:17\n"
      "F4,a,2026-03-14T06:18:42.318\n"
      "F5,a,\"2026-03-14 06:19:42,5\"\n"
      "F6,a,20260314T062000\n";
  auto r = parse_planned_log(csv, 60);
  REQUIRE(r.ok());
  const auto& pl = r.value().placements;
  REQUIRE(pl.size() == 6);
  CHECK(pl[0].planned_s == local("2026-03-14T06:15:00"));
  CHECK(pl[0].planned == "2026-03-14T06:15:00");
  CHECK(pl[0].planned_as_written == "2026-03-14 06:15:00");
  CHECK(pl[1].planned_s == local("2026-03-14T06:16:00"));
  CHECK(pl[1].planned == "2026-03-14T06:16:00");
  CHECK(pl[2].planned_s == local("2026-03-14T06:17:00"));
  CHECK(pl[3].planned_s - local("2026-03-14T06:18:42") == doctest::Approx(0.318));
  CHECK(pl[3].planned == "2026-03-14T06:18:42.318");
  CHECK(pl[4].planned_s - local("2026-03-14T06:19:42") == doctest::Approx(0.5));
  CHECK(pl[4].planned == "2026-03-14T06:19:42.5");
  CHECK(pl[5].planned_s == local("2026-03-14T06:20:00"));
  for (const auto& p : pl) CHECK(!p.written_utc_offset_s.has_value());
}

TEST_CASE("Z and UTC offsets are converted to the station's local time (Europe/Berlin, +01:00 in March 2026)") {
  const char* csv =
      "slot,spot,planned\n"
      "G1,a,2026-03-14T05:15:00Z\n"
      "G2,a,2026-03-14 06:15:00+01:00\n"
      "G3,a,2026-03-14T07:15+0200\n"
      "G4,a,2026-03-14T00:15:00-05\n"
      "G5,a,2026-03-14T06:15:00\n"
      "G6,a,2026-03-14 05:15:00.250z\n";
  auto r = parse_planned_log(csv, berlin());
  REQUIRE(r.ok());
  const auto& pl = r.value().placements;
  REQUIRE(pl.size() == 6);
  for (size_t i = 0; i < 5; ++i) {
    CAPTURE(pl[i].planned_as_written);
    CHECK(pl[i].planned_s == local("2026-03-14T06:15:00"));
    CHECK(pl[i].planned == "2026-03-14T06:15:00");
  }
  CHECK(pl[5].planned == "2026-03-14T06:15:00.250");
  CHECK(pl[0].written_utc_offset_s == 0);
  CHECK(pl[1].written_utc_offset_s == 3600);
  CHECK(pl[2].written_utc_offset_s == 7200);
  CHECK(pl[3].written_utc_offset_s == -5 * 3600);
  CHECK(!pl[4].written_utc_offset_s.has_value());  // local time, as written
  CHECK(pl[0].planned_as_written == "2026-03-14T05:15:00Z");
}

TEST_CASE("daylight saving in the log: the repeated hour's two instances and the skipped hour (Europe/Berlin)") {
  const char* csv =
      "slot,spot,planned\n"
      // 2026-10-25: clocks go back at 01:00Z, from 03:00 CEST to 02:00 CET.
      "R1,a,2026-10-25T00:30:00Z\n"        // first 02:30 (CEST)
      "R2,a,2026-10-25T01:30:00Z\n"        // second 02:30 (CET)
      "R3,a,2026-10-25T02:30:00+02:00\n"   // the first, written with its offset
      "R4,a,2026-10-25T02:30:00+01:00\n"   // the second
      "R5,a,2026-10-25T00:59:59Z\n"        // last second of summer time
      "R6,a,2026-10-25T01:00:00Z\n"        // first of winter time: the clock reads 02:00 again
      // 2026-03-29: clocks go forward at 01:00Z, from 02:00 CET to 03:00 CEST.
      "K1,a,2026-03-29T00:59:59Z\n"
      "K2,a,2026-03-29T01:00:00Z\n"
      "K3,a,2026-03-29T01:30:00Z\n";
  auto r = parse_planned_log(csv, berlin());
  REQUIRE(r.ok());
  REQUIRE(r.value().problems.empty());
  const auto& pl = r.value().placements;
  REQUIRE(pl.size() == 9);
  CHECK(pl[0].planned == "2026-10-25T02:30:00");
  CHECK(pl[1].planned == "2026-10-25T02:30:00");
  CHECK(pl[2].planned == "2026-10-25T02:30:00");
  CHECK(pl[3].planned == "2026-10-25T02:30:00");
  CHECK(pl[4].planned == "2026-10-25T02:59:59");
  CHECK(pl[5].planned == "2026-10-25T02:00:00");
  CHECK(pl[6].planned == "2026-03-29T01:59:59");
  CHECK(pl[7].planned == "2026-03-29T03:00:00");
  CHECK(pl[8].planned == "2026-03-29T03:30:00");
  // One second apart in UTC, an hour and a second apart on the local clock.
  CHECK(pl[7].planned_s - pl[6].planned_s == 3601);
}

TEST_CASE("a UTC offset without a zone is a per-row problem that says so") {
  const char* csv =
      "slot,spot,planned\n"
      "H1,a,2026-03-14T05:15:00Z\n"
      "H2,a,2026-03-14T06:15:00\n";
  auto r = parse_planned_log(csv, 60);
  REQUIRE(r.ok());
  REQUIRE(r.value().placements.size() == 1);
  REQUIRE(r.value().problems.size() == 1);
  CHECK(r.value().problems[0].line == 2);
  CHECK(r.value().problems[0].reason ==
        "planned time '2026-03-14T05:15:00Z' has a UTC offset; set --time-zone to the station's zone");
  PlannedLogOptions o;
  o.zone_setting = "time_zone";
  auto d = parse_planned_log(csv, o);
  CHECK(contains(d.value().problems[0].reason, "set time_zone to the station's zone"));
}

TEST_CASE("each rejected row says exactly why") {
  const char* csv =
      "slot,spot,planned,window_s\n"
      "P1,a,yesterday at six,30\n"            // 2
      "P2,a,2026-02-30T06:00:00,30\n"         // 3
      "P3,a,2026-13-01 06:00,30\n"            // 4
      "P4,a,2026-03-14T24:00:00,30\n"         // 5
      "P5,a,2026-03-14T06:00:00+19:00,30\n"   // 6
      "P6,a,2026-03-14T05:00:00Z,30\n"        // 7
      "P7,a,2026-03-14T06:00:00,soon\n"       // 8
      "P8,a,2026-03-14T06:00:00,100000\n"     // 9
      ",a,2026-03-14T06:00:00,30\n"           // 10
      "P9,a,2026-03-14T06:00:00,30\n"         // 11: valid
      "P9,b,2026-03-14T06:01:00,30\n"         // 12
      "P10,,2026-03-14T06:00:00,30\n"         // 13
      "P11,a,,30\n"                           // 14
      "P12,a,2026-03-14T06:00:00\n"           // 15
      "P13,a,b,2026-03-14T06:00:00,30\n"      // 16
      "P14,\"a,2026-03-14T06:00:00,30\n"      // 17
      "P15,a,2026-03-14 06:00:00 +01:00,30\n" // 18
      "P16,a,2024-02-29T06:00:00,30\n";       // 19: valid (leap year)
  auto r = parse_planned_log(csv, 60);
  REQUIRE(r.ok());
  const auto& log = r.value();
  REQUIRE(log.placements.size() == 2);
  CHECK(log.placements[0].slot == "P9");
  CHECK(log.placements[1].slot == "P16");
  const std::pair<size_t, const char*> expected[] = {
      {2, "planned time 'yesterday at six' is not a date-time such as 2026-03-14T06:15:00"},
      {3, "planned time '2026-02-30T06:00:00' has an invalid calendar date (February has 28 days in 2026)"},
      {4, "planned time '2026-13-01 06:00' has an invalid calendar date (month 13 does not exist)"},
      {5, "planned time '2026-03-14T24:00:00' has an invalid time of day"},
      {6, "planned time '2026-03-14T06:00:00+19:00' has an invalid UTC offset"},
      {7, "has a UTC offset; set --time-zone to the station's zone"},
      {8, "window_s 'soon' is not a number of seconds from 0 to 86400"},
      {9, "window_s '100000' is not a number of seconds from 0 to 86400"},
      {10, "empty slot id"},
      {12, "duplicate slot: 'P9' already defined on line 11"},
      {13, "empty spot id"},
      {14, "empty planned time"},
      {15, "wrong number of fields: 3 where the header has 4"},
      {16, "wrong number of fields: 5 where the header has 4"},
      {17, "unterminated quote"},
      {18, "planned time '2026-03-14 06:00:00 +01:00' is not a date-time"},
  };
  CHECK(log.problems.size() == std::size(expected));
  for (const auto& [line, reason] : expected) {
    CAPTURE(line);
    const LogProblem* p = problem_on(log, line);
    REQUIRE(p != nullptr);
    CHECK_MESSAGE(contains(p->reason, reason), p->reason);
  }
}

TEST_CASE("blank rows as spreadsheets export them are skipped, a byte order mark is read, UTF-16 is refused") {
  auto r = parse_planned_log("\xEF\xBB\xBFslot;spot;planned\n;;\nS1;a;2026-03-14 06:00\n ; ; \n", 60);
  REQUIRE(r.ok());
  CHECK(r.value().placements.size() == 1);
  CHECK(r.value().problems.empty());
  auto u = parse_planned_log(std::string("\xFF\xFEs\0l\0o\0t\0", 10), 60);
  REQUIRE(!u.ok());
  CHECK(u.error().code == ErrorCode::usage);
  CHECK(contains(u.error().message, "UTF-16"));
  auto q = parse_planned_log("slot,\"spot,planned\n", 60);
  REQUIRE(!q.ok());
  CHECK(contains(q.error().message, "unterminated quote"));
}

TEST_CASE("a log with no valid row is no_placements, exit code 8, with the first reasons") {
  auto empty = parse_planned_log("", 60);
  REQUIRE(empty.ok());
  CHECK(require_placements(empty.value()).error().code == ErrorCode::no_placements);
  CHECK(contains(require_placements(empty.value()).error().message, "it is empty"));
  auto header = parse_planned_log("# exported\nslot,spot,planned\n", 60);
  REQUIRE(header.ok());
  CHECK(contains(require_placements(header.value()).error().message, "a header (line 2) and no rows"));
  auto rejected = parse_planned_log(
      "slot,spot,planned\nS1,a,2026-03-14T05:00:00Z\nS2,a,2026-02-30 06:00\nS3,a,noon\nS4,a,06:00\n", 60);
  REQUIRE(rejected.ok());
  const Status st = require_placements(rejected.value());
  REQUIRE(!st.ok());
  CHECK(st.error().code == ErrorCode::no_placements);
  CHECK(contains(st.error().message, "4 row(s) rejected"));
  CHECK(contains(st.error().message, "line 2: planned time '2026-03-14T05:00:00Z' has a UTC offset"));
  CHECK(contains(st.error().message, "line 3: "));
  CHECK(contains(st.error().message, "and 1 more"));
  CHECK(wire_name(ErrorCode::no_placements) == "no_placements");
  auto one = parse_planned_log("slot,spot,planned\nS1,a,noon\nS2,a,2026-03-14T06:00:00\n", 60);
  CHECK(require_placements(one.value()).ok());
}

TEST_CASE("reconcile inputs: an unknown zone stops the run before anything is read, no valid row is an error") {
  test::TempDir dir;
  // An unknown zone is found before the library (which does not exist) is scanned.
  ReconcileInputs in;
  in.library = (dir.path() / "no-such-library").string();
  in.schedule = dir.file("log.csv");
  in.recordings = {dir.file("r.wav")};
  in.time_zone = "Europe/Atlantis";
  std::vector<std::string> warnings;
  auto r = load_reconcile_job(in, warnings);
  REQUIRE(!r.ok());
  CHECK(r.error().code == ErrorCode::usage);
  CHECK(contains(r.error().message, "unknown time zone 'Europe/Atlantis'"));

  std::filesystem::create_directories(dir.path() / "lib");
  { std::ofstream(dir.file("lib/a.wav")) << "listed, never decoded here"; }
  { std::ofstream(dir.file("log.csv")) << "slot;spot;planned\nS1;a;2026-03-14T05:00:00Z\nS2;a;2026-02-30 06:00\n"; }
  in.library = dir.file("lib");
  in.time_zone.clear();
  warnings.clear();
  auto none = load_reconcile_job(in, warnings);
  REQUIRE(!none.ok());
  CHECK(none.error().code == ErrorCode::no_placements);
  CHECK(none.error().path == dir.file("log.csv"));
  REQUIRE(warnings.size() == 2);  // each row's reason is still given
  CHECK(contains(warnings[0], "log.csv:2: planned time '2026-03-14T05:00:00Z' has a UTC offset; set --time-zone"));
  CHECK(contains(warnings[1], "log.csv:3: planned time '2026-02-30 06:00' has an invalid calendar date"));

  // With the zone, the same log has a valid row.
  in.time_zone = "Europe/Berlin";
  warnings.clear();
  auto some = load_reconcile_job(in, warnings);
  REQUIRE(some.ok());
  REQUIRE(some.value().log.placements.size() == 1);
  CHECK(some.value().log.placements[0].planned == "2026-03-14T06:00:00");
  CHECK(warnings.size() == 1);
}
