// The streams of a plan's search: names given for opening, places read
// back as runs and recordings (never from the names), and a file whose
// name looks like a run's is still itself.
#include "godwit/compliance/search_streams.h"

#include <doctest/doctest.h>

#include <cmath>

#include "godwit/audio/resampler.h"
#include "godwit/compliance/timeline_locate.h"
#include "synth.h"
#include "test_util.h"

using namespace godwit;

TEST_CASE("a plan's streams are the files alone then the runs, read back by place") {
  const Timeline tl = build_timeline({{"/air/a.wav", 0, 60, 8000, 0, RecordingId{0}},
                                      {"/air/b.wav", 60, 60, 8000, 0, RecordingId{1}},
                                      {"/air/c.wav", 1000, 60, 8000, 0, RecordingId{3}}},
                                     0.5);
  REQUIRE(tl.runs.size() == 2);
  CHECK(tl.runs[1].files[0].recording == RecordingId{3});
  const SearchStreams s(tl, {{RecordingId{2}, "/air/broken.wav"}, {RecordingId{4}, "run:1"}});
  CHECK(s.names().size() == 4);
  CHECK(s.names()[0] == "/air/broken.wav");
  CHECK(s.runs() == 2);
  CHECK(s.stream(RunId{0}) == RecordingId{2});
  CHECK(s.run_of(s.stream(RunId{0})) == RunId{0});
  CHECK(s.run_of(s.stream(RunId{1})) == RunId{1});
  CHECK(s.name(RunId{0}) == s.names()[2]);
  // The files alone are the job's recordings they were given as.
  CHECK(s.alone_of(RecordingId{0}) == RecordingId{2});
  CHECK(s.alone_of(RecordingId{1}) == RecordingId{4});
  CHECK_FALSE(s.alone_of(RecordingId{2}).has_value());
  CHECK_FALSE(s.run_of(RecordingId{1}).has_value());
  CHECK_FALSE(s.run_of(RecordingId{4}).has_value());  // beyond the search
  // A file searched alone keeps its name; the run takes another.
  CHECK(s.name(RunId{1}) != "run:1");
  // Its opener reads a run as its files in one stream, anything else through the base.
  test::MemoryFiles files;
  files.files["/air/a.wav"] = {Samples(60 * 8000, 0.1f), 8000};
  files.files["/air/b.wav"] = {Samples(60 * 8000, 0.2f), 8000};
  const SourceOpener open = s.opener(tl, files.opener());
  auto run = open(s.name(RunId{0}), {});
  REQUIRE(run.ok());
  REQUIRE(run.value()->info().native_frames.has_value());
  CHECK(*run.value()->info().native_frames == 120 * 8000);
  CHECK(open("/air/a.wav", {}).ok());
  CHECK(open("run:1", {}).error().code == ErrorCode::not_found);
  CHECK(open("run:00", {}).error().code == ErrorCode::not_found);  // no name it gave: a parser would read run 0
}

TEST_CASE("a broken recording named like a run is searched as itself, not as the run") {
  // "run:0" breaks part way and states no length: the plan cannot read it
  // whole, so it is searched alone; b.wav is the timeline's only run. Each holds one airing: a name read as a run would search b.wav
  // twice and report its airing under "run:0".
  test::MemoryFiles files;
  Samples master = synth::music(12, 8000, 3);
  synth::mix_into(master, synth::voice(10, 8000, 4), 0, 1.0);
  synth::set_rms(master, 0.1);
  files.files["lib/m.wav"] = {master, 8000};
  Samples a = synth::programme(60, 8000, 1), b = synth::programme(60, 8000, 2);
  for (size_t i = 0; i < master.size(); ++i) {
    a[5 * 8000 + i] = 0.8f * master[i];
    b[30 * 8000 + i] = 0.8f * master[i];
  }
  files.files["run:0"] = {a, 8000, 40 * 8000};  // fails at 40 s
  files.files["b.wav"] = {b, 8000};
  LocateOptions o = test::fast_locate_options(files);
  o.speed.enabled = false;
  o.opener = [base = files.opener()](const std::string& path, ChannelChoice c) -> Result<SourcePtr> {
    auto s = base(path, c);
    if (!s || path != "run:0") return s;
    return SourcePtr(std::make_unique<test::Unsized>(std::move(s.value())));
  };
  auto r = run_locate_job({{"lib/m.wav"}, {"run:0", "b.wav"}}, o);
  REQUIRE(r.ok());
  REQUIRE(r.value().matches.size() == 2);
  CHECK(r.value().matches[0].recording == "run:0");
  CHECK(r.value().matches[0].recording_id == RecordingId{0});
  CHECK(r.value().matches[0].offset_s == doctest::Approx(5.0).epsilon(1e-4));
  CHECK(r.value().matches[1].recording == "b.wav");
  CHECK(r.value().matches[1].recording_id == RecordingId{1});
  CHECK(r.value().matches[1].offset_s == doctest::Approx(30.0).epsilon(1e-4));
  REQUIRE(r.value().recordings.size() == 2);
  CHECK(r.value().recordings[0].error.has_value());
  CHECK_FALSE(r.value().recordings[1].error.has_value());
}
