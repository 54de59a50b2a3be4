#include "godwit/report/html_report.h"

#include <doctest/doctest.h>

#include <set>

#include "godwit/compliance/civil_time.h"

using namespace godwit;

namespace {

// A morning recorded 06:00-06:14 with one airing (S001) and a placement on
// another hour (S002).
ReconcileResult morning() {
  ReconcileResult r;
  const LocalSeconds six = *parse_iso8601_local("2026-03-14T06:00:00");
  r.recorded = {{six, six + 840}};
  r.spots["marlow-bakery"] = {"marlow-bakery.wav", 20, {"Morning loaves", "Marlow Bakery", ""}};
  Placement p;
  p.slot = "S001";
  p.spot = "marlow-bakery";
  p.planned_s = six + 30;
  p.planned = "2026-03-14T06:00:30";
  p.window_s = 60;
  r.placements.push_back(p);
  p.slot = "S002";
  p.planned_s = six + 3 * 3600;
  p.planned = "2026-03-14T09:00:00";
  r.placements.push_back(p);
  AiringRecord a;
  a.spot = "marlow-bakery";
  a.aired_s = six + 37.25;
  a.length_s = 20;
  a.coverage = 1;
  a.score = 0.99;
  a.missing_s = {{15.0, 15.0}};  // empty: never printed
  r.airings.push_back(a);
  Verdict v;
  v.placement = 0;
  v.status = VerdictStatus::aired;
  v.airing = 0;
  v.deviation_s = -0.0;
  r.verdicts.push_back(v);
  v.placement = 1;
  v.status = VerdictStatus::not_recorded;
  v.airing.reset();
  r.verdicts.push_back(v);
  return r;
}

}  // namespace

TEST_CASE("the heading takes station and day from the planned log's name") {
  const ReconcileResult r = morning();
  // 2026-03-14 was a Saturday (Python's datetime.date(2026, 3, 14).strftime("%A")).
  ReportHeading h = report_heading("kestrel-fm-2026-03-14", r);
  CHECK(h.station == "kestrel-fm");
  CHECK(h.day == "2026-03-14");
  CHECK(h.weekday == "Saturday");
  h = report_heading("kfm_20260315_log", r);
  CHECK(h.station == "kfm_log");
  CHECK(h.day == "2026-03-15");
  CHECK(h.weekday == "Sunday");
  // No date in the name: the first placement's.
  h = report_heading("morning-log", r);
  CHECK(h.station == "morning-log");
  CHECK(h.day == "2026-03-14");
  // Eight digits that are no date are part of the name.
  h = report_heading("log-20261399", r);
  CHECK(h.day == "2026-03-14");
}

TEST_CASE("the page lists placements outside the recorded time apart and prints no empty range or negative zero") {
  const std::string page = reconcile_to_html(morning(), {"kestrel-fm-2026-03-14", {}, "", nullptr});
  CHECK(page.find("<title>kestrel-fm, Saturday 2026-03-14") != std::string::npos);
  CHECK(page.find("<ul id=\"outside\"><li data-slot=\"S002\"") != std::string::npos);
  CHECK(page.find("<g class=\"slot\" data-slot=\"S002\"") == std::string::npos);
  CHECK(page.find("<g class=\"slot\" data-slot=\"S001\"") != std::string::npos);
  CHECK(page.find("15.00-15.00") == std::string::npos);
  CHECK(page.find("-0.000") == std::string::npos);
  CHECK(page.find("Marlow Bakery: Morning loaves") != std::string::npos);
  CHECK(page.find("<audio") == std::string::npos);  // no excerpts, no players
}

TEST_CASE("every verdict has its own colour") {
  std::set<std::string> colours;
  for (VerdictStatus st : all_verdicts()) colours.insert(verdict_colour(verdict_name(st)));
  colours.insert(verdict_colour("unscheduled"));
  CHECK(colours.size() == all_verdicts().size() + 1);
  CHECK(std::string(verdict_colour("early")) != verdict_colour("late"));
}
