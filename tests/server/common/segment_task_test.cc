// Segments of a distributed job: the split of a long stream, the parts of
// a window, and the one property that matters, that searching a stream in
// segments and merging (task_plan.h) finds what one search of the whole
// stream finds.
#include "segment_task.h"

#include <doctest/doctest.h>

#include <cmath>

#include "godwit/report/locate_report.h"
#include "godwit/audio/resampler.h"
#include "synth.h"
#include "task_plan.h"
#include "test_util.h"

using namespace godwit;

TEST_CASE("a long stream splits into owned spans that tile it, each read with its margin from a 64 s multiple") {
  Stream s{"run:0", {{"a.flac", 3600 * 8000, 0}, {"b.flac", 3600 * 8000, 0}, {"c.flac", 1800 * 8000, 0}}, 8000, 9000};
  const auto segs = split_stream(s, 3600, 45);
  REQUIRE(segs.size() == 3);  // 3600 + 3600 + 1800 (over a quarter span: its own)
  CHECK(std::isinf(segs[0].own_from_s));
  CHECK(segs[0].own_to_s == 3600);
  CHECK(segs[1].own_from_s == 3600);
  CHECK(segs[1].own_to_s == 7200);
  CHECK(std::isinf(segs[2].own_to_s));
  CHECK(segs[1].read_from_s == 3520);  // floor((3600 - 45) / 64) * 64 = 55 * 64
  CHECK(segs[1].read_to_s == 7245);
  for (const auto& g : segs) CHECK(std::fmod(g.read_from_s, kSegmentAlignS) == 0);
  // Short streams, streams without parts (length unknown): one whole segment.
  CHECK(split_stream(Stream{"x.flac", {{"x.flac", 5000 * 8000, 0}}, 8000, 5000}, 3600, 45).size() == 1);
  CHECK(split_stream(Stream{"y.mp3", {}, 0, 90000}, 3600, 45).size() == 1);
  // A last piece under a quarter span joins the one before.
  CHECK(split_stream(Stream{"z", {{"z", 7500 * 8000, 0}}, 8000, 7500}, 3600, 45).size() == 2);
  // Through JSON and back (unbounded ends as null).
  auto back = segment_from_json(segment_to_json(segs[0]));
  REQUIRE(back);
  CHECK(std::isinf(back.value().own_from_s));
  CHECK(back.value().own_to_s == 3600);
  CHECK(back.value().stream.parts.size() == 3);
  CHECK(back.value().stream.parts[2].frames == 1800 * 8000);
  // A part's own rate travels with it (a run may mix rates).
  Segment mixed = segs[0];
  mixed.stream.parts[1].rate_hz = 44100;
  auto mixed_back = segment_from_json(segment_to_json(mixed));
  REQUIRE(mixed_back);
  CHECK(mixed_back.value().stream.parts[1].rate_hz == 44100);
  CHECK(mixed_back.value().stream.parts[0].rate_hz == 0);
  CHECK(!segment_from_json(nlohmann::json{{"parts", 3}}));
}

TEST_CASE("the parts of a window keep each file's own frame numbers") {
  // Two files, the second skipping 100 frames that overlap the first.
  const std::vector<ConcatPart> parts{{"a", 1000, 0}, {"b", 1100, 100}};
  auto w = window_parts(parts, 10, 900, 1500);
  REQUIRE(w.size() == 2);
  CHECK(w[0].path == "a");
  CHECK(w[0].skip_frames == 900);
  CHECK(w[0].frames == 1000);
  CHECK(w[1].path == "b");
  CHECK(w[1].skip_frames == 100);
  CHECK(w[1].frames == 600);  // stream frame 1500 is b's frame 600
  CHECK(window_parts(parts, 10, 1200, 1300).size() == 1);
  CHECK(window_parts(parts, 10, 1200, 1300)[0].skip_frames == 300);
  CHECK(window_parts(parts, 10, 5000, 6000).empty());
  // A run whose second file was logged at twice the stream's rate: its
  // 2000 own frames are 1000 stream frames; stream frame 1500 is its frame 1000.
  const std::vector<ConcatPart> mixed{{"a", 1000, 0, 10}, {"b", 2000, 0, 20}};
  auto m = window_parts(mixed, 10, 900, 1500);
  REQUIRE(m.size() == 2);
  CHECK(m[0].frames == 1000);
  CHECK(m[0].skip_frames == 900);
  CHECK(m[1].rate_hz == 20);
  CHECK(m[1].skip_frames == 0);
  CHECK(m[1].frames == 1000);
  CHECK(window_parts(mixed, 10, 1200, 1300)[0].skip_frames == 400);
}

TEST_CASE("a stream searched in segments and merged gives the matches of one search of the whole stream") {
  test::MemoryFiles files;
  const double rate = 16000;
  const std::vector<std::pair<std::string, double>> masters{{"gull", 12.0}, {"tern", 20.0}, {"wren", 6.0}};
  std::map<std::string, Samples> m;
  uint64_t seed = 11;
  for (const auto& [id, len] : masters) {
    m[id] = synth::spot(len, rate, seed++);
    files.files[id + ".wav"] = {m[id], rate};
  }
  // 25 minutes in spans of 400 s: airings astride each boundary, one just
  // after, one just before, and one played 2 % fast across a boundary.
  Samples x = synth::programme(1500, rate, 5);
  auto plant = [&](const Samples& s, double at_s) {
    const size_t at = static_cast<size_t>(std::llround(at_s * rate));
    for (size_t i = 0; i < s.size() && at + i < x.size(); ++i) x[at + i] = static_cast<float>(0.8 * s[i]);
  };
  const std::vector<std::pair<std::string, double>> plants{
      {"gull", 100.0}, {"tern", 392.5}, {"wren", 400.0}, {"gull", 795.0}, {"wren", 1210.0}, {"tern", 1480.0}};
  for (const auto& [id, at] : plants) plant(m[id], at);
  plant(resample_all(m["gull"], rate, rate / 1.02), 1195.0);
  files.files["air.wav"] = {x, rate};
  const std::vector<std::string> templates{"gull.wav", "tern.wav", "wren.wav"};

  auto o = test::fast_locate_options(files);
  auto whole = run_locate(LocateJob{templates, {"air.wav"}}, o);
  REQUIRE(whole);
  REQUIRE(whole.value().matches.size() == plants.size() + 1);

  const Stream stream{"air.wav", {{"air.wav", static_cast<int64_t>(x.size()), 0}}, rate, 1500};
  const auto tasks = plan_tasks("j", SegmentSpec{}, {stream}, templates, 20.0 / 0.955 + 12,
                                PlanOptions{2, 400});
  REQUIRE(tasks.size() == 4 * 2);  // 4 spans x 2 batches of masters
  std::vector<nlohmann::json> results;
  for (const auto& t : tasks) {
    auto seg = segment_from_json(t.spec["segment"]);
    REQUIRE(seg);
    auto r = search_segment(seg.value(), t.spec["templates"].get<std::vector<std::string>>(), o);
    REQUIRE(r);
    results.push_back(locate_to_json(r.value(), true));
  }
  auto merged = merge_results({stream}, templates, tasks, results);
  REQUIRE(merged);
  const auto& a = whole.value().matches;
  const auto& b = merged.value().search.matches;
  REQUIRE(b.size() == a.size());
  for (size_t i = 0; i < a.size(); ++i) {
    CAPTURE(i);
    CAPTURE(a[i].offset_s);
    CHECK(b[i].template_id == a[i].template_id);
    CHECK(b[i].recording == "air.wav");
    CHECK(std::fabs(b[i].offset_s - a[i].offset_s) < 1e-5);
    CHECK(std::fabs(b[i].score - a[i].score) < 1e-3);
    CHECK(std::fabs(b[i].speed - a[i].speed) < 1e-5);
  }
  REQUIRE(merged.value().search.recordings.size() == 1);
  CHECK(std::fabs(merged.value().search.recordings[0].duration_s - 1500) < 1e-6);
  REQUIRE(merged.value().search.templates.size() == 3);
  CHECK(merged.value().search.templates[1].id == "tern");
}
