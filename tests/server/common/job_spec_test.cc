// The typed job model: the JSON the journal and the queue carry (the job
// objects server/PROTOCOL.md documents) read into types and written back
// unchanged, and every field checked in the one place.
#include "job_spec.h"

#include <doctest/doctest.h>

#include "wire_code.h"

using namespace godwit;

TEST_CASE("prepared jobs and tasks read into types and write back as the same JSON") {
  const nlohmann::json locate{{"kind", "locate"},        {"templates", {"/lib/a.wav", "/lib/b.wav"}},
                              {"recordings", {"/air/x.flac"}}, {"threshold", 0.3},
                              {"floor_k", 10.0},         {"fft_size", 0},
                              {"max_speed_change_pct", 4.5}, {"max_tempo_change_pct", 5.0},
                              {"screen", true}};
  const nlohmann::json reconcile{{"kind", "reconcile"},   {"library", "/lib"},   {"schedule", "/logs/day.csv"},
                                 {"recordings", {"/air/x.flac"}}, {"window_s", 60.0}, {"time_zone", "Europe/Berlin"},
                                 {"excerpts", false},     {"max_speed_change_pct", 0.0},
                                 {"max_tempo_change_pct", 2.0}};
  Segment seg;
  seg.stream = {"run:0", {{"/air/x.flac", 8000 * 3600, 0, 8000}}, 8000, 3600};
  seg.read_to_s = 1800;
  const nlohmann::json segment{{"kind", "segment"},
                               {"segment", segment_to_json(seg)},
                               {"templates", {"/lib/a.wav"}},
                               {"evidence", true},
                               {"max_speed_change_pct", 4.5},
                               {"max_tempo_change_pct", 0.0}};
  for (const auto& j : {locate, reconcile, segment}) {
    auto s = job_spec_from_json(j);
    REQUIRE_MESSAGE(s.ok(), s.error().describe());
    CHECK(job_spec_to_json(s.value()) == j);
    CHECK(job_kind(s.value()) == j["kind"].get<std::string>());
    CHECK(check_job_spec(s.value()).ok());
  }
  const auto l = std::get<LocateSpec>(job_spec_from_json(locate).value());
  CHECK(l.recordings == std::vector<std::string>{"/air/x.flac"});
  CHECK(*l.search.threshold == 0.3);
  // The screen reaches the engine's options; unstated, the engine's default stays.
  LocateOptions lo;
  l.search.apply(lo);
  CHECK(lo.screen.enabled);
  LocateOptions unstated;
  SearchFields{}.apply(unstated);
  CHECK(unstated.screen.enabled == ScreenOptions{}.enabled);
  const auto r = std::get<ReconcileSpec>(job_spec_from_json(reconcile).value());
  CHECK(r.excerpts == std::optional<bool>(false));
  CHECK(r.time_zone == "Europe/Berlin");
  CHECK(r.search.max_tempo_change_pct == 2.0);
  // Absent fields: the defaults, written back as stated.
  auto bare = job_spec_from_json({{"kind", "reconcile"}, {"library", "/lib"}, {"schedule", "/s.csv"}, {"recordings", {"/a"}}});
  REQUIRE(bare.ok());
  const auto& b = std::get<ReconcileSpec>(bare.value());
  CHECK(b.window_s == 60);
  CHECK(b.search.max_speed_change_pct == 4.5);
  CHECK(b.search.max_tempo_change_pct == 5.0);
  CHECK_FALSE(b.excerpts.has_value());
}

TEST_CASE("the one default speed range is the engine's and covers the film-rate change") {
  // 25 fps film shown at 24 (or back) changes speed by 25/24 - 1 = 4.17 %
  // (common practice, from memory); the default must cover it.
  CHECK(kDefaultMaxSpeedChangePct == doctest::Approx(100 * SpeedOptions{}.max_deviation));
  CHECK(kDefaultMaxSpeedChangePct >= 100.0 * (25.0 / 24.0 - 1.0));
  LocateOptions lo;
  SearchFields off;
  off.max_speed_change_pct = 0;
  off.apply(lo);
  CHECK_FALSE(lo.speed.enabled);
  SearchFields on;
  on.threshold = 0.25;
  on.apply(lo);
  CHECK(lo.speed.enabled);
  CHECK(lo.speed.max_deviation == doctest::Approx(0.045));
  CHECK(lo.speed.max_tempo_deviation == doctest::Approx(0.05));
  SearchFields no_tempo;
  no_tempo.max_tempo_change_pct = 0;
  no_tempo.apply(lo);
  CHECK(lo.speed.enabled);
  CHECK(lo.speed.max_tempo_deviation == 0);
  CHECK(lo.picker.threshold == 0.25);
}

TEST_CASE("a job with a field of the wrong kind or out of range is refused naming the field") {
  auto refused = [](const nlohmann::json& j) -> std::string {
    auto s = job_spec_from_json(j);
    if (s.ok()) return "";
    CHECK(s.error().code == ProtocolCode::bad_request);
    return s.error().message;
  };
  const nlohmann::json ok{{"kind", "locate"}, {"templates", {"/a.wav"}}, {"recordings", {"/x.flac"}}};
  CHECK(refused(ok).empty());
  auto with = [&](const char* field, nlohmann::json v) {
    nlohmann::json j = ok;
    j[field] = std::move(v);
    return refused(j);
  };
  CHECK(with("threshold", 2.0).find("'threshold' must lie in") == 0);
  CHECK(with("threshold", "high").find("'threshold' must be a number") == 0);
  CHECK(with("max_speed_change_pct", 11).find("'max_speed_change_pct'") == 0);
  CHECK(with("max_tempo_change_pct", -1).find("'max_tempo_change_pct' must lie in") == 0);
  CHECK(with("max_tempo_change_pct", "5").find("'max_tempo_change_pct' must be a number") == 0);
  CHECK(with("fft_size", 1000).find("'fft_size' must be a power of two") == 0);
  CHECK(with("screen", 1).find("'screen' must be true or false") == 0);
  CHECK(with("templates", "/a.wav").find("'templates'") == 0);
  CHECK(with("recordings", nlohmann::json::array({1})).find("'recordings'") == 0);
  CHECK(with("kind", "segments").find("'kind'") == 0);
  CHECK(refused(nlohmann::json::array()) == "a job must be an object");
  CHECK(refused({{"kind", "segment"}, {"templates", {"/a.wav"}}}).find("'segment'") == 0);
  CHECK(refused({{"kind", "reconcile"}, {"library", "/lib"}, {"schedule", "/s.csv"}, {"recordings", {"/a"}},
                 {"window_s", -1}})
            .find("'window_s'") == 0);
  // Built in code (the drop folder's): the same checks.
  LocateSpec none;
  none.recordings = {"/x.flac"};
  CHECK_FALSE(check_job_spec(none).ok());
  LocateSpec fast;
  fast.templates = {"/a.wav"};
  fast.recordings = {"/x.flac"};
  fast.search.max_speed_change_pct = 50;
  CHECK_FALSE(check_job_spec(fast).ok());
  fast.search.max_speed_change_pct = 3;
  CHECK(check_job_spec(fast).ok());
}
