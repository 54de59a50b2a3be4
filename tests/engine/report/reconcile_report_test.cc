// The reconcile JSON's confirmation figures: what a reader needs to see why
// a detection was or was not called an airing (README, "Confirmation").
#include "godwit/report/reconcile_report.h"

#include <doctest/doctest.h>

using namespace godwit;

TEST_CASE("reconcile JSON lists turned-down detections with the figures they were judged by") {
  ReconcileResult r;
  RejectedDetection x;
  x.spot = "marlow-bakery";
  x.aired_s = 12 * 3600 + 0.25;  // noon of the epoch day, local
  x.score = 0.51234;
  x.coverage = 0.9876;
  x.aired_score = 0.4567;
  x.foreground_contrast = 0.0871;
  x.shape_match = 0.3333;
  r.rejected.push_back(x);
  r.rejected_weak = 1;
  AiringRecord a;
  a.spot = "pellham-garden-centre";
  a.aired_s = 13 * 3600;
  a.foreground_contrast = -0.0123;
  a.shape_match = 0.9012;
  r.airings.push_back(a);
  r.unscheduled.push_back(0);
  const auto j = reconcile_to_json(r);
  REQUIRE(j["rejected_detections"].size() == 1);
  const auto& d = j["rejected_detections"][0];
  CHECK(d["spot"] == "marlow-bakery");
  CHECK(d["aired"] == "1970-01-01T12:00:00.250");
  CHECK(d["score"].get<double>() == doctest::Approx(0.5123));
  CHECK(d["coverage"].get<double>() == doctest::Approx(0.988));
  CHECK(d["aired_score"].get<double>() == doctest::Approx(0.457));
  CHECK(d["foreground_contrast"].get<double>() == doctest::Approx(0.087));
  CHECK(d["shape_match"].get<double>() == doctest::Approx(0.333));
  CHECK(j["rejected_weak_detections"] == 1);
  REQUIRE(j["unscheduled"].size() == 1);
  CHECK(j["unscheduled"][0]["foreground_contrast"].get<double>() == doctest::Approx(-0.012));
  CHECK(j["unscheduled"][0]["shape_match"].get<double>() == doctest::Approx(0.901));
}
