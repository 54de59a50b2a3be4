#include "godwit/planned_log.h"

#include <doctest/doctest.h>

using namespace godwit;

TEST_CASE("rows parse; bad rows are reported by line with the reason and the rest still count") {
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
  REQUIRE(log.placements.size() == 2);
  CHECK(log.placements[0].window_s == 30);
  CHECK(log.placements[1].spot == "tidewater, tyres");
  CHECK(log.placements[1].window_s == 90);  // empty: the default
  REQUIRE(log.problems.size() == 5);
  CHECK(log.problems[0].line == 4);
  CHECK(log.problems[0].reason.find("ISO 8601") != std::string::npos);
  CHECK(log.problems[1].line == 5);
  CHECK(log.problems[1].reason.find("line 2") != std::string::npos);
  CHECK(log.problems[2].line == 6);
  CHECK(log.problems[3].line == 9);
  CHECK(log.problems[4].line == 10);
}

TEST_CASE("columns in any order; a header without spot is refused") {
  auto r = parse_planned_log("planned,spot,slot\n2026-03-14T06:15:00,a,S\n", 60);
  REQUIRE(r.ok());
  CHECK(r.value().placements[0].slot == "S");
  CHECK(r.value().placements[0].window_s == 60);
  auto bad = parse_planned_log("slot,planned\nS,2026-03-14T06:15:00\n", 60);
  REQUIRE(!bad.ok());
  CHECK(bad.error().code == ErrorCode::usage);
  CHECK(parse_planned_log("", 60).error().code == ErrorCode::empty);
}
