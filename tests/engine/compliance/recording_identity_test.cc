// Which recording a detection belongs to is its place in the job's list
// (RecordingId, recording_id.h), never its path. A user may give the same
// file twice (a shell glob and a name typed again, or one file for two
// hours with explicit starts), under one spelling or two: each copy keeps
// its own matches, its own break and its own airings. Each case fails when
// identity is read back from path strings (shown against such a build once;
// see the commit that added it).
#include "godwit/search/recording_id.h"

#include <doctest/doctest.h>

#include "godwit/compliance/civil_time.h"
#include "godwit/compliance/reconcile_job.h"
#include "godwit/compliance/timeline_locate.h"
#include "synth.h"
#include "test_util.h"

using namespace godwit;

namespace {

constexpr double kRate = 8000;

// A 12 s master: a music bed under a voice (the confirmation wants a
// foreground to judge by).
Samples master_audio() {
  Samples m = synth::music(12, kRate, 3);
  synth::mix_into(m, synth::voice(10, kRate, 4), 0, 1.0);
  synth::set_rms(m, 0.1);
  return m;
}

// 60 s of programme with the master aired at each of `at_s`.
Samples aircheck(uint64_t seed, const Samples& master, const std::vector<double>& at_s) {
  Samples a = synth::programme(60, kRate, seed);
  for (double at : at_s)
    for (size_t i = 0; i < master.size(); ++i) a[static_cast<size_t>(at * kRate) + i] = 0.8f * master[i];
  return a;
}

}  // namespace

TEST_CASE("locate: the same file given twice is two recordings, each with its own matches and its own break") {
  test::MemoryFiles files;
  const Samples m = master_audio();
  files.files["lib/m.wav"] = {m, kRate};
  // Airings at 5 s and 30 s; the file states its length (the plan reads it
  // whole without decoding) and breaks at 45 s, which the search finds.
  files.files["air/x.wav"] = {aircheck(1, m, {5, 30}), kRate, static_cast<int64_t>(45 * kRate)};
  files.files["air/./x.wav"] = files.files["air/x.wav"];  // the same file, spelt otherwise
  LocateOptions o = test::fast_locate_options(files);
  o.speed.enabled = false;
  // No time in the names: each file is its own run.
  auto r = run_locate_job({{"lib/m.wav"}, {"air/x.wav", "air/x.wav", "air/./x.wav"}}, o);
  REQUIRE(r.ok());
  const auto& ms = r.value().matches;
  REQUIRE(ms.size() == 6);
  // By recording in the job's order, then offset (job.h): 5 s and 30 s of each copy in turn.
  for (size_t i = 0; i < ms.size(); ++i) {
    CAPTURE(i);
    CHECK(ms[i].recording_id == RecordingId{i / 2});
    CHECK(ms[i].offset_s == doctest::Approx(i % 2 ? 30.0 : 5.0).epsilon(1e-4));
  }
  CHECK(ms[1].recording == "air/x.wav");
  CHECK(ms[3].recording == "air/x.wav");
  CHECK(ms[5].recording == "air/./x.wav");
  // Each copy reports where it broke.
  REQUIRE(r.value().recordings.size() == 3);
  for (const auto& rec : r.value().recordings) {
    CAPTURE(rec.path);
    REQUIRE(rec.error.has_value());
    REQUIRE(rec.error->offset_s.has_value());
    CHECK(*rec.error->offset_s == doctest::Approx(45.0).epsilon(1e-3));
  }
  CHECK_FALSE(r.value().complete());
}

TEST_CASE("locate: a file searched alone, given twice around another, keeps each copy's place") {
  // y.wav states no length and breaks at 40 s: the plan cannot read it
  // whole, so each copy is searched alone, under the same name; z.wav
  // between them is a run.
  test::MemoryFiles files;
  const Samples m = master_audio();
  files.files["lib/m.wav"] = {m, kRate};
  files.files["air/y.wav"] = {aircheck(2, m, {5, 20}), kRate, static_cast<int64_t>(40 * kRate)};
  files.files["air/z.wav"] = {aircheck(3, m, {25}), kRate};
  LocateOptions o = test::fast_locate_options(files);
  o.speed.enabled = false;
  o.opener = [base = files.opener()](const std::string& path, ChannelChoice c) -> Result<SourcePtr> {
    auto s = base(path, c);
    if (!s || path != "air/y.wav") return s;
    return SourcePtr(std::make_unique<test::Unsized>(std::move(s.value())));
  };
  auto r = run_locate_job({{"lib/m.wav"}, {"air/y.wav", "air/z.wav", "air/y.wav"}}, o);
  REQUIRE(r.ok());
  const auto& ms = r.value().matches;
  REQUIRE(ms.size() == 5);
  const std::vector<std::pair<size_t, double>> want{{0, 5.0}, {0, 20.0}, {1, 25.0}, {2, 5.0}, {2, 20.0}};
  for (size_t i = 0; i < ms.size(); ++i) {
    CAPTURE(i);
    CHECK(ms[i].recording_id == RecordingId{want[i].first});
    CHECK(ms[i].offset_s == doctest::Approx(want[i].second).epsilon(1e-4));
  }
  REQUIRE(r.value().recordings.size() == 3);
  CHECK(r.value().recordings[0].error.has_value());
  CHECK_FALSE(r.value().recordings[1].error.has_value());
  CHECK(r.value().recordings[2].error.has_value());
}

TEST_CASE("reconcile: one file given for two hours gives each airing the recording it aired in") {
  test::MemoryFiles files;
  const Samples m = master_audio();
  files.files["lib/m.wav"] = {m, kRate};
  files.files["air/x.wav"] = {aircheck(1, m, {5}), kRate};
  ReconcileJob job;
  job.masters = {"lib/m.wav"};
  job.recordings = {{"air/x.wav", parse_iso8601_local("2026-03-01T06:00:00")},
                    {"air/x.wav", parse_iso8601_local("2026-03-01T07:00:00")}};
  job.log = parse_planned_log("slot,spot,planned\nS1,m,2026-03-01T06:00:05\nS2,m,2026-03-01T07:00:05\n", 60).value();
  ReconcileOptions ro;
  ro.locate = test::fast_locate_options(files);
  ro.locate.speed.enabled = false;
  ro.loudness.enabled = false;
  auto r = run_reconcile(job, ro);
  REQUIRE(r.ok());
  const auto& as = r.value().airings;
  REQUIRE(as.size() == 2);
  CHECK(as[0].recording_id == RecordingId{0});
  CHECK(as[1].recording_id == RecordingId{1});
  CHECK(as[0].run == RunId{0});
  CHECK(as[1].run == RunId{1});
  CHECK(as[1].recording == "air/x.wav");
  CHECK(as[1].offset_s == doctest::Approx(5.0).epsilon(1e-4));
  REQUIRE(r.value().verdicts.size() == 2);
  for (const auto& v : r.value().verdicts) CHECK(v.status == VerdictStatus::aired);
}
