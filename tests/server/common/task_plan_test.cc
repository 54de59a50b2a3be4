// Queue mode's pure parts: the queue URL, the task plan and the merge.
#include "task_plan.h"

#include <doctest/doctest.h>

#include <cmath>
#include <limits>
#include <set>

#include "redis_connection.h"
#include "segment_task.h"

using namespace godwit;

TEST_CASE("queue URLs: host, port, stream, bad ones are usage errors") {
  auto q = parse_queue_url("redis://10.1.2.3:6380/kestrel-tasks");
  REQUIRE(q);
  CHECK(q.value().host == "10.1.2.3");
  CHECK(q.value().port == 6380);
  CHECK(q.value().stream == "kestrel-tasks");
  auto d = parse_queue_url("redis://queue-host");
  REQUIRE(d);
  CHECK(d.value().port == 6379);
  CHECK(d.value().stream == "godwit");
  auto v6 = parse_queue_url("redis://[::1]:7000/s");
  REQUIRE(v6);
  CHECK(v6.value().host == "::1");
  CHECK(v6.value().port == 7000);
  for (const char* bad : {"http://x:1/s", "redis://:6379/s", "redis://h:99999/s", "redis://h:12ab/s", "redis://[::1/s"}) {
    CAPTURE(bad);
    auto r = parse_queue_url(bad);
    REQUIRE(!r);
    CHECK(r.error().code == ErrorCode::usage);
  }
}

namespace {

Stream whole(const std::string& path) { return Stream{path, {}, 0, 0}; }

nlohmann::json doc(const std::string& rec, const std::string& tmpl, std::vector<std::pair<double, double>> offsets_scores,
                   bool error = false, double error_at_s = 0, double decoded_s = 60) {
  nlohmann::json r{{"path", rec}, {"format", "flac"}, {"duration_s", decoded_s}, {"native_rate_hz", 44100}, {"channels", 2}};
  if (error) r["error"] = {{"code", "corrupt"}, {"message", "broke"}, {"offset_s", error_at_s}};
  nlohmann::json ms = nlohmann::json::array();
  for (auto [off, score] : offsets_scores)
    ms.push_back({{"template", tmpl}, {"recording", rec}, {"offset_s", off}, {"score", score}});
  return nlohmann::json{{"analysis_rate_hz", 8000.0},
                        {"templates", {{{"id", tmpl}, {"path", "/lib/" + tmpl + ".wav"}, {"duration_s", 10.0}, {"fft_size", 0}}}},
                        {"recordings", {r}},
                        {"matches", ms}};
}

}  // namespace

TEST_CASE("a job splits into stream x master-batch tasks with stable, distinct ids") {
  const std::vector<std::string> templates{"/lib/t1.wav", "/lib/t2.wav", "/lib/t3.wav"};
  const std::vector<Stream> streams{whole("/air/a.flac"), whole("/air/b.flac"), whole("/air/a.flac")};
  SegmentSpec base;
  base.search.threshold = 0.4;
  const PlanOptions po{2, 3600};
  const auto tasks = plan_tasks("j1", base, streams, templates, 45, po);
  REQUIRE(tasks.size() == 6);  // 3 recordings x (2 + 1 masters)
  CHECK(tasks[0].spec["kind"] == "segment");
  CHECK(tasks[0].spec["segment"]["name"] == "/air/a.flac");
  CHECK(tasks[0].spec["templates"] == nlohmann::json::array({"/lib/t1.wav", "/lib/t2.wav"}));
  CHECK(tasks[1].spec["templates"] == nlohmann::json::array({"/lib/t3.wav"}));
  CHECK(tasks[0].spec["threshold"] == 0.4);
  CHECK(tasks[5].stream == 2);
  std::set<std::string> ids;
  for (const auto& t : tasks) ids.insert(t.id);
  CHECK(ids.size() == 6);  // a file listed twice is searched twice
  const auto again = plan_tasks("j1", base, streams, templates, 45, po);
  for (size_t i = 0; i < tasks.size(); ++i) CHECK(again[i].id == tasks[i].id);
  CHECK(plan_tasks("j2", base, streams, templates, 45, po)[0].id != tasks[0].id);
  // A day of 24 hour files as one run: 24 spans x 2 batches.
  Stream day{"run:0", {}, 8000, 86400};
  for (int h = 0; h < 24; ++h) day.parts.push_back({"/air/h" + std::to_string(h) + ".flac", 3600 * 8000, 0});
  CHECK(plan_tasks("j3", base, {day}, templates, 45, po).size() == 48);
}

TEST_CASE("merging orders matches as one process does and keeps a recording's earliest error") {
  const std::vector<std::string> templates{"/lib/t1.wav", "/lib/t2.wav"};
  const std::vector<Stream> streams{whole("a.flac"), whole("b.flac")};
  const auto tasks = plan_tasks("j", SegmentSpec{}, streams, templates, 45, PlanOptions{1, 3600});
  REQUIRE(tasks.size() == 4);  // a x t1, a x t2, b x t1, b x t2
  const std::vector<nlohmann::json> results{doc("a.flac", "t1", {{9.0, 0.9}}), doc("a.flac", "t2", {{3.0, 0.8}}),
                                            doc("b.flac", "t1", {{1.0, 0.7}}, true, 30, 30),
                                            doc("b.flac", "t2", {{2.0, 0.7}}, true, 20, 20)};
  auto m = merge_results(streams, templates, tasks, results);
  REQUIRE(m);
  const auto& r = m.value().search;
  REQUIRE(r.matches.size() == 4);
  CHECK(r.matches[0].offset_s == 3.0);  // a.flac first, by offset
  CHECK(r.matches[1].offset_s == 9.0);
  CHECK(r.matches[2].recording == "b.flac");
  REQUIRE(r.templates.size() == 2);
  CHECK(r.templates[0].id == "t1");
  REQUIRE(r.recordings.size() == 2);
  CHECK(!r.recordings[0].error);
  REQUIRE(r.recordings[1].error);
  CHECK(*r.recordings[1].error->offset_s == 20);  // the earlier break
  CHECK(r.recordings[1].error->code == ErrorCode::corrupt);
  CHECK(!r.complete());
  CHECK(!merge_results(streams, templates, tasks, {results[0]}));
  CHECK(!merge_results(streams, templates, tasks, {results[0], results[1], results[2], nlohmann::json{{"x", 1}}}));
}

TEST_CASE("a detection reported by two neighbouring segments is kept once, with the better score") {
  const std::vector<std::string> templates{"/lib/t1.wav"};
  Stream s{"long.flac", {{"long.flac", 7500 * 8000, 0}}, 8000, 7500};
  const auto tasks = plan_tasks("j", SegmentSpec{}, {s}, templates, 45, PlanOptions{1, 3600});
  REQUIRE(tasks.size() == 2);  // 3600 + 3900 (the last 300 s join the second span)
  // Both saw the airing at 3599.99 / 3600.01 (a peak either side of the boundary).
  std::vector<nlohmann::json> results{doc("long.flac", "t1", {{100.0, 0.9}, {3599.99, 0.81}}, false, 0, 3645),
                                      doc("long.flac", "t1", {{3600.01, 0.83}, {3610.5, 0.9}}, false, 0, 7500)};
  // Reconcile tasks' evidence travels with its match.
  results[0]["evidence"] = {{{"coverage", 1.0}}, {{"coverage", 0.81}}};
  results[1]["evidence"] = {{{"coverage", 0.83}}, {{"coverage", 0.9}}};
  auto m = merge_results({s}, templates, tasks, results);
  REQUIRE(m);
  const auto& ms = m.value().search.matches;
  REQUIRE(ms.size() == 3);  // 3610.5 is 10.49 s after 3600.01: a new airing of a 10 s master
  CHECK(ms[0].offset_s == 100.0);
  CHECK(ms[1].offset_s == 3600.01);
  CHECK(ms[1].score == 0.83);
  CHECK(ms[2].offset_s == 3610.5);
  REQUIRE(m.value().evidence.size() == 3);
  CHECK(m.value().evidence[1]["coverage"] == 0.83);
  CHECK(m.value().evidence[2]["coverage"] == 0.9);
  results[1]["evidence"].erase(1);  // evidence for other matches than the task's: refused
  CHECK(!merge_results({s}, templates, tasks, results));
  CHECK(m.value().search.recordings[0].duration_s == 7500);  // the furthest decoded
}

// A long file's body in spans (the queue's task_span_s): the pieces still
// tile the stream, each owns span_s but the last, and the file's pieces
// are the same (relative to the file) alone and after another file.
TEST_CASE("split at files: a long body splits into spans that are the same pieces in any run") {
  const double rate = 8000, margin = 50, span = 1000;
  auto file = [&](const char* path, double seconds) { return ConcatPart{path, static_cast<int64_t>(seconds * rate), 0, 0}; };
  Stream alone{"run:0", {file("b.wav", 4000)}, rate, 4000};
  Stream day{"run:0", {file("a.wav", 600), file("b.wav", 4000)}, rate, 4600};
  const auto a = split_at_files(alone, margin, span);
  // Its start, the body [12, 3950) in 4 pieces (1000 s each, the last 938 s: over a quarter span, so its own), its end.
  REQUIRE(a.size() == 6);
  CHECK(a[1].own_from_s == kPieceLeadS);
  CHECK(a[1].own_to_s == kPieceLeadS + span);
  CHECK(a[4].own_from_s == kPieceLeadS + 3 * span);
  CHECK(a[4].own_to_s == 4000 - margin);
  for (size_t i = 0; i + 1 < a.size(); ++i) CHECK(a[i].own_to_s == a[i + 1].own_from_s);
  for (const auto& p : a)
    if (std::isfinite(p.own_from_s)) CHECK(p.read_from_s <= p.own_from_s - kPieceLeadS);
  const auto d = split_at_files(day, margin, span);
  // a's start, a's body (538 s: whole), a|b, b's body in 4, b's end.
  REQUIRE(d.size() == 8);
  for (size_t k = 1; k <= 4; ++k) {
    CAPTURE(k);
    const Segment& x = a[k];
    const Segment& y = d[k + 2];
    CHECK(y.own_from_s - 600 == doctest::Approx(x.own_from_s));
    CHECK(y.own_to_s - 600 == doctest::Approx(x.own_to_s));
    CHECK(y.read_from_s - 600 == doctest::Approx(x.read_from_s));
    if (std::isfinite(x.read_to_s)) CHECK(y.read_to_s - 600 == doctest::Approx(x.read_to_s));
    else CHECK(std::isinf(y.read_to_s));
  }
  // A short last span joins the one before: a body of 2200 s is 1000 + 1200.
  const auto s = split_at_files(Stream{"run:0", {file("c.wav", 2262)}, rate, 2262}, margin, span);
  REQUIRE(s.size() == 4);
  CHECK(s[2].own_to_s == 2262 - margin);
}

// Plans split at files (PlanOptions::at_files): the pieces tile the
// stream, each file's body reads exactly that file wherever it sits in a
// run, and the point where two files meet is owned by one piece reading
// a margin into both (so an airing across them is found once).
TEST_CASE("split at files: pieces tile the stream and a file's body is the same piece in any run") {
  constexpr double kInf = std::numeric_limits<double>::infinity();
  const double rate = 8000, margin = 50;
  auto file = [&](const char* path, double seconds) { return ConcatPart{path, static_cast<int64_t>(seconds * rate), 0, 0}; };
  Stream alone{"run:0", {file("b.wav", 3600)}, rate, 3600};
  Stream day{"run:0", {file("a.wav", 3600), file("b.wav", 3600), file("c.wav", 60)}, rate, 7260};
  for (const Stream* st : {&alone, &day}) {
    const auto pieces = split_at_files(*st, margin);
    REQUIRE(!pieces.empty());
    CHECK(pieces.front().own_from_s == -kInf);
    CHECK(pieces.back().own_to_s == kInf);
    for (size_t i = 0; i + 1 < pieces.size(); ++i) CHECK(pieces[i].own_to_s == pieces[i + 1].own_from_s);
    for (const auto& p : pieces) {
      CHECK(p.own_from_s < p.own_to_s);
      // The lead read before what it owns, from the 64 s grid of its file, and a margin after (within the stream).
      if (std::isfinite(p.own_from_s)) CHECK(p.read_from_s <= p.own_from_s - kPieceLeadS);
      if (std::isfinite(p.read_to_s)) CHECK(p.read_to_s >= p.own_to_s + margin);
    }
  }
  // Alone: its start, its body, its end.
  const auto a = split_at_files(alone, margin);
  REQUIRE(a.size() == 3);
  CHECK(a[1].own_from_s == kPieceLeadS);
  CHECK(a[1].own_to_s == 3600 - margin);
  // In the day: a's start, a's body, a|b, b's body, and b|c with c's end merged (c is shorter than a margin and a lead).
  const auto d = split_at_files(day, margin);
  REQUIRE(d.size() == 5);
  CHECK(d[2].own_from_s == 3600 - margin);
  CHECK(d[2].own_to_s == 3600 + kPieceLeadS);
  CHECK(d[2].read_from_s == 55 * 64);  // the grid point at or before 3550 - 12 s, on a's grid
  CHECK(d[2].read_to_s == 3600 + kPieceLeadS + margin);
  CHECK(d[4].own_from_s == 7200 - margin);
  // b's body reads exactly b, owning the same part of it, in either run.
  const Segment& body = d[3];
  CHECK(body.own_from_s - body.read_from_s == doctest::Approx(a[1].own_from_s - a[1].read_from_s));
  CHECK(body.own_to_s - body.read_from_s == doctest::Approx(a[1].own_to_s - a[1].read_from_s));
  const auto w = window_parts(day.parts, rate, std::llround(body.read_from_s * rate), std::llround(body.read_to_s * rate));
  REQUIRE(w.size() == 1);
  CHECK(w[0].path == "b.wav");
  CHECK(w[0].skip_frames == 0);
  CHECK(w[0].frames == static_cast<int64_t>(3600 * rate));
  // A stream read whole stays one segment.
  CHECK(split_at_files(Stream{"x.wav", {}, rate, 10}, margin).size() == 1);
}

TEST_CASE("merging gives each match the stream its task searched, whatever the streams are called") {
  // A file listed twice is two streams of one name; a file alone may be
  // called like a run. The task's place in the plan says which stream.
  const std::vector<std::string> templates{"/lib/t1.wav"};
  const std::vector<Stream> streams{whole("a.flac"), whole("run:0"), whole("a.flac")};
  const auto tasks = plan_tasks("j", SegmentSpec{}, streams, templates, 45, PlanOptions{1, 3600});
  REQUIRE(tasks.size() == 3);
  const std::vector<nlohmann::json> results{doc("a.flac", "t1", {{9.0, 0.9}}), doc("run:0", "t1", {{4.0, 0.8}}),
                                            doc("a.flac", "t1", {{3.0, 0.7}})};
  auto m = merge_results(streams, templates, tasks, results);
  REQUIRE(m);
  const auto& ms = m.value().search.matches;
  REQUIRE(ms.size() == 3);  // by stream, then offset
  CHECK(ms[0].recording_id == RecordingId{0});
  CHECK(ms[0].offset_s == 9.0);
  CHECK(ms[1].recording_id == RecordingId{1});
  CHECK(ms[2].recording_id == RecordingId{2});
  CHECK(ms[2].offset_s == 3.0);
  CHECK(ms[2].recording == "a.flac");
  // A task reports its own stream only.
  auto two = results;
  two[0]["recordings"].push_back(two[0]["recordings"][0]);
  CHECK(!merge_results(streams, templates, tasks, two));
}
