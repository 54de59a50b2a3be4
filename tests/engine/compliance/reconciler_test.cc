// Verdict logic. The cases are the project's own rules (reconciler.h);
// window semantics (an airing exactly at the window's edge is in the
// window) are common practice for "+/- N seconds" windows.
#include "godwit/compliance/reconciler.h"

#include <doctest/doctest.h>

using namespace godwit;

namespace {
Placement at(const char* slot, const char* spot, double t, double window) {
  Placement p;
  p.slot = std::string(slot);  // moved in: assigning the char* trips GCC 12's -Wrestrict (PR 105329)
  p.spot = std::string(spot);
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

TEST_CASE("one airing near two placements serves the closer, the other is missing") {
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

TEST_CASE("in-window airing beats a closer-in-time one outside the window, exact spot beats sibling") {
  const std::vector<Placement> p{at("S1", "tyres-a", 1000, 30)};
  const auto r = reconcile(p, {{"tyres-b", 1001, 1.0, {}}, {"tyres-a", 1020, 1.0, {}}}, sib);
  CHECK(r.verdicts[0].status == VerdictStatus::aired);
  CHECK(*r.verdicts[0].airing == 1);
  CHECK(r.unscheduled == std::vector<size_t>{0});
  const auto w = reconcile(p, {{"tyres-b", 1001, 1.0, {}}}, sib);
  CHECK(w.verdicts[0].status == VerdictStatus::wrong_version);
}

TEST_CASE("partial below the coverage fraction, undetermined versions count as the planned spot") {
  const std::vector<Placement> p{at("S1", "tyres-a", 1000, 30), at("S2", "x", 2000, 30)};
  const auto r = reconcile(p, {{"tyres-b", 1000, 0.5, {"tyres-a", "tyres-b"}}, {"x", 2000, 0.89, {}}}, sib);
  CHECK(r.verdicts[0].status == VerdictStatus::partial);
  CHECK(r.verdicts[1].status == VerdictStatus::partial);
  const auto ok = reconcile(p, {{"x", 2000, 0.9, {}}}, sib);
  CHECK(ok.verdicts[1].status == VerdictStatus::aired);
}

VerdictOptions fixed_horizon(double s) {
  VerdictOptions o;
  o.horizon_s = s;
  return o;
}

TEST_CASE("airings beyond the horizon are not a placement's, other spots never are") {
  const std::vector<Placement> p{at("S1", "x", 0, 60)};
  const auto r = reconcile(p, {{"x", 4000, 1.0, {}}, {"y", 10, 1.0, {}}}, sib, fixed_horizon(3600));
  CHECK(r.verdicts[0].status == VerdictStatus::missing);
  CHECK(r.unscheduled.size() == 2);
}

TEST_CASE("the default horizon follows the window: 3 x window + 4 minutes") {
  // Window 60 s: horizon 420 s. An airing 421 s late is another airing.
  const std::vector<Placement> p{at("S1", "x", 10000, 60)};
  CHECK(reconcile(p, {{"x", 10420, 1.0, {}}}, sib).verdicts[0].status == VerdictStatus::late);
  const auto far = reconcile(p, {{"x", 10421, 1.0, {}}}, sib);
  CHECK(far.verdicts[0].status == VerdictStatus::missing);
  CHECK(far.unscheduled == std::vector<size_t>{0});
  // An airing an hour away never serves a placement by default.
  CHECK(reconcile(p, {{"x", 13600, 1.0, {}}}, sib).verdicts[0].status == VerdictStatus::missing);
  VerdictOptions wide;
  wide.horizon_windows = 10;
  CHECK(reconcile(p, {{"x", 10800, 1.0, {}}}, sib, wide).verdicts[0].status == VerdictStatus::late);
}

TEST_CASE("optimal assignment: a greedy first pick must not starve a later placement") {
  // S1 could take either airing; S2 only reaches the one at 1090. Greedy
  // (closest pair first) gives S1 the airing at 1090 (20 s away) and
  // leaves S2 missing; the matching serves both.
  const std::vector<Placement> p{at("S1", "x", 1070, 60), at("S2", "x", 1200, 60)};
  VerdictOptions o = fixed_horizon(120);
  const auto r = reconcile(p, {{"x", 1000, 1.0, {}}, {"x", 1090, 1.0, {}}}, sib, o);
  CHECK(r.verdicts[0].status == VerdictStatus::early);  // 1000 - 1070 = -70 s
  CHECK(*r.verdicts[0].airing == 0);
  CHECK(r.verdicts[1].status == VerdictStatus::early);  // 1090 - 1200 = -110 s
  CHECK(*r.verdicts[1].airing == 1);
  CHECK(r.unscheduled.empty());
}

TEST_CASE("optimal assignment: a sibling inside the window beats the same spot outside it") {
  const std::vector<Placement> p{at("S1", "tyres-a", 1000, 60)};
  const auto r = reconcile(p, {{"tyres-b", 1005, 1.0, {}}, {"tyres-a", 1200, 1.0, {}}}, sib);
  CHECK(r.verdicts[0].status == VerdictStatus::wrong_version);
  CHECK(*r.verdicts[0].airing == 0);
  CHECK(r.unscheduled == std::vector<size_t>{1});
  // With a second placement for the later airing, both are served.
  const std::vector<Placement> two{at("S1", "tyres-a", 1000, 60), at("S2", "tyres-a", 1190, 60)};
  const auto both = reconcile(two, {{"tyres-b", 1005, 1.0, {}}, {"tyres-a", 1200, 1.0, {}}}, sib);
  CHECK(both.verdicts[0].status == VerdictStatus::wrong_version);
  CHECK(both.verdicts[1].status == VerdictStatus::aired);
}

TEST_CASE("a sibling costs a window of deviation: a version swap does not buy two far pairings") {
  // A family's two versions planned a minute apart; a cut airing whose
  // version cannot be told 16 s after the first, and a whole airing of
  // the first placement's version at the second's time. The slot's
  // airings with one wrong copy (16 + 0.4 s, plus 60 s for the sibling)
  // beat serving the exact version 59 s late and the cut one 43 s early.
  const std::vector<Placement> p{at("S1", "tyres-a", 1000, 60), at("S2", "tyres-b", 1059, 60)};
  const std::vector<AiringRef> a{{"tyres-b", 1016, 0.6, {"tyres-a", "tyres-b"}}, {"tyres-a", 1059.4, 1.0, {}}};
  const auto r = reconcile(p, a, sib);
  CHECK(r.verdicts[0].status == VerdictStatus::partial);
  CHECK(*r.verdicts[0].airing == 0);
  CHECK(r.verdicts[1].status == VerdictStatus::wrong_version);
  CHECK(*r.verdicts[1].airing == 1);
  // The same spot far inside the window still beats a sibling right on time when the
  // deviation is under a window: S1 takes tyres-a at 50 s rather than tyres-b at 0 s.
  const auto near = reconcile({at("S1", "tyres-a", 1000, 60)}, {{"tyres-b", 1000, 1.0, {}}, {"tyres-a", 1050, 1.0, {}}}, sib);
  CHECK(near.verdicts[0].status == VerdictStatus::aired);
  CHECK(*near.verdicts[0].airing == 1);
}

TEST_CASE("not_recorded: a window not wholly recorded, with what was and was not") {
  // Recorded 06:00-07:00 (21600-25200 s) and 07:10-08:00 (25800-28800).
  VerdictContext ctx;
  ctx.library_length_s = {{"x", 30.0}};
  ctx.recorded = std::vector<LocalSpan>{{21600, 25200}, {25800, 28800}};
  const std::vector<Placement> p{
      at("S1", "x", 22000, 60),  // wholly recorded, nothing found: missing
      at("S2", "x", 25500, 60),  // in the gap: not recorded at all
      at("S3", "x", 25190, 60),  // window 25130-25280 runs into the gap
      at("S4", "x", 30000, 60),  // after the last recording
      at("S5", "x", 21000, 60),  // before the first
  };
  const auto r = reconcile(p, {}, sib, {}, ctx);
  CHECK(r.verdicts[0].status == VerdictStatus::missing);
  for (size_t i = 1; i < 5; ++i) CHECK(r.verdicts[i].status == VerdictStatus::not_recorded);
  REQUIRE(r.verdicts[1].unrecorded.size() == 1);
  CHECK(r.verdicts[1].unrecorded[0] == LocalSpan{25440, 25590});
  CHECK(r.verdicts[1].recorded.empty());
  REQUIRE(r.verdicts[2].recorded.size() == 1);
  CHECK(r.verdicts[2].recorded[0] == LocalSpan{25130, 25200});
  CHECK(r.verdicts[2].unrecorded[0] == LocalSpan{25200, 25280});
  // An airing found in a partly recorded window still gets its verdict.
  const auto found = reconcile({at("S3", "x", 25190, 60)}, {{"x", 25150, 1.0, {}}}, sib, {}, ctx);
  CHECK(found.verdicts[0].status == VerdictStatus::aired);
}

TEST_CASE("unknown_spot, with a suggestion for a case or small spelling difference") {
  VerdictContext ctx;
  ctx.library_length_s = {{"harbour-bakery", 20.0}, {"quarry-tiles", 30.0}};
  const std::vector<Placement> p{at("S1", "Harbour-Bakery", 1000, 60), at("S2", "quary-tiles", 2000, 60),
                                 at("S3", "zz-unrelated", 3000, 60)};
  const auto r = reconcile(p, {{"harbour-bakery", 1000, 1.0, {}}}, sib, {}, ctx);
  for (const auto& v : r.verdicts) CHECK(v.status == VerdictStatus::unknown_spot);
  CHECK(r.verdicts[0].suggestion == "harbour-bakery");
  CHECK(r.verdicts[1].suggestion == "quarry-tiles");
  CHECK(r.verdicts[2].suggestion.empty());
  CHECK(r.unscheduled.size() == 1);  // the airing is not given to a placement of an unknown id
}

#include <algorithm>
#include <random>

#include "compliance/min_cost_assignment.h"

TEST_CASE("min-cost assignment equals exhaustive search on random matrices") {
  // Reference: every injective row-to-column map enumerated (brute force,
  // independent of the Hungarian method's potentials).
  std::mt19937 rng(11);
  for (int trial = 0; trial < 200; ++trial) {
    const size_t rows = 1 + rng() % 5, cols = rows + rng() % 3;
    std::vector<std::vector<detail::AssignmentCost>> cost(rows, std::vector<detail::AssignmentCost>(cols));
    for (auto& r : cost)
      for (auto& c : r) c = static_cast<detail::AssignmentCost>(rng() % 50);
    const auto got = detail::min_cost_assignment(cost);
    detail::AssignmentCost got_sum = 0;
    std::vector<bool> taken(cols, false);
    for (size_t r = 0; r < rows; ++r) {
      REQUIRE(got[r] < cols);
      CHECK_FALSE(taken[got[r]]);
      taken[got[r]] = true;
      got_sum += cost[r][got[r]];
    }
    std::vector<size_t> perm(cols);
    for (size_t i = 0; i < cols; ++i) perm[i] = i;
    detail::AssignmentCost best = -1;
    do {
      detail::AssignmentCost s = 0;
      for (size_t r = 0; r < rows; ++r) s += cost[r][perm[r]];
      if (best < 0 || s < best) best = s;
    } while (std::next_permutation(perm.begin(), perm.end()));
    CHECK(static_cast<long long>(got_sum) == static_cast<long long>(best));
  }
}
