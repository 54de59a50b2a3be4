// Verdict logic. The cases are the project's own rules (reconciler.h);
// window semantics (an airing exactly at the window's edge is in the
// window) are common practice for "+/- N seconds" windows.
#include "godwit/reconciler.h"

#include <doctest/doctest.h>

using namespace godwit;

namespace {
Placement at(const char* slot, const char* spot, double t, double window) {
  Placement p;
  p.slot = slot;
  p.spot = spot;
  p.planned_s = t;
  p.window_s = window;
  return p;
}
bool sib(const std::string& a, const std::string& b) {
  return a != b && a.rfind("tyres", 0) == 0 && b.rfind("tyres", 0) == 0;
}
}  // namespace

TEST_CASE("window edges: exactly at the edge is aired, just outside is early or late") {
  const std::vector<Placement> p{at("S1", "x", 1000, 60), at("S2", "x", 5000, 60), at("S3", "x", 9000, 60)};
  const std::vector<AiringRef> a{{"x", 1060.0, 1.0, {}}, {"x", 5060.001, 1.0, {}}, {"x", 8939.999, 1.0, {}}};
  const auto r = reconcile(p, a, sib);
  CHECK(r.verdicts[0].status == VerdictStatus::aired);
  CHECK(r.verdicts[1].status == VerdictStatus::late);
  CHECK(r.verdicts[2].status == VerdictStatus::early);
  CHECK(r.verdicts[2].deviation_s == doctest::Approx(-60.001));
  CHECK(r.unscheduled.empty());
}

TEST_CASE("two airings for one placement: the closer serves it, the other is unscheduled") {
  const std::vector<Placement> p{at("S1", "x", 1000, 60)};
  const std::vector<AiringRef> a{{"x", 1030, 1.0, {}}, {"x", 1005, 1.0, {}}};
  const auto r = reconcile(p, a, sib);
  REQUIRE(r.verdicts[0].airing.has_value());
  CHECK(*r.verdicts[0].airing == 1);
  REQUIRE(r.unscheduled.size() == 1);
  CHECK(r.unscheduled[0] == 0);
}

TEST_CASE("one airing near two placements serves the closer; the other is missing") {
  const std::vector<Placement> p{at("S1", "x", 1000, 60), at("S2", "x", 1100, 60)};
  const std::vector<AiringRef> a{{"x", 1070, 1.0, {}}};
  const auto r = reconcile(p, a, sib);
  CHECK(r.verdicts[0].status == VerdictStatus::missing);
  CHECK(r.verdicts[1].status == VerdictStatus::aired);
  // Equal distance: the earlier planned placement takes it (stable rule).
  const auto tie = reconcile(p, {{"x", 1050, 1.0, {}}}, sib);
  CHECK(tie.verdicts[0].status == VerdictStatus::aired);
  CHECK(tie.verdicts[1].status == VerdictStatus::missing);
}

TEST_CASE("in-window airing beats a closer-in-time one outside the window; exact spot beats sibling") {
  const std::vector<Placement> p{at("S1", "tyres-a", 1000, 30)};
  const auto r = reconcile(p, {{"tyres-b", 1001, 1.0, {}}, {"tyres-a", 1020, 1.0, {}}}, sib);
  CHECK(r.verdicts[0].status == VerdictStatus::aired);
  CHECK(*r.verdicts[0].airing == 1);
  CHECK(r.unscheduled == std::vector<size_t>{0});
  const auto w = reconcile(p, {{"tyres-b", 1001, 1.0, {}}}, sib);
  CHECK(w.verdicts[0].status == VerdictStatus::wrong_version);
}

TEST_CASE("partial below the coverage fraction; undetermined versions count as the planned spot") {
  const std::vector<Placement> p{at("S1", "tyres-a", 1000, 30), at("S2", "x", 2000, 30)};
  const auto r = reconcile(p, {{"tyres-b", 1000, 0.5, {"tyres-a", "tyres-b"}}, {"x", 2000, 0.89, {}}}, sib);
  CHECK(r.verdicts[0].status == VerdictStatus::partial);
  CHECK(r.verdicts[1].status == VerdictStatus::partial);
  const auto ok = reconcile(p, {{"x", 2000, 0.9, {}}}, sib);
  CHECK(ok.verdicts[1].status == VerdictStatus::aired);
}

TEST_CASE("airings beyond the horizon are not a placement's; other spots never are") {
  const std::vector<Placement> p{at("S1", "x", 0, 60)};
  const auto r = reconcile(p, {{"x", 4000, 1.0, {}}, {"y", 10, 1.0, {}}}, sib, {0.9, 3600});
  CHECK(r.verdicts[0].status == VerdictStatus::missing);
  CHECK(r.unscheduled.size() == 2);
}
