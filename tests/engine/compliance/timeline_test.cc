#include "godwit/compliance/timeline.h"

#include <doctest/doctest.h>

using namespace godwit;

TEST_CASE("contiguous files form one run, gaps split runs, overlaps are trimmed and reported") {
  std::vector<TimelineFile> files{
      {"h07.flac", 7 * 3600.0, 3600, 44100, 0, RecordingId{0}},
      {"h06.flac", 6 * 3600.0, 3600.2, 44100, 0, RecordingId{1}},    // 0.2 s jitter: contiguous
      {"h08.flac", 8 * 3600.0 + 1.0, 3600, 44100, 0, RecordingId{2}},  // 0.8 s after h07's end (h07 ends 08:00:00): gap
      {"h09.flac", 9 * 3600.0 - 4.0, 3600, 44100, 0, RecordingId{3}},  // starts 5 s before h08 ends: overlap
  };
  const Timeline t = build_timeline(files, 0.5);
  REQUIRE(t.runs.size() == 2);
  CHECK(t.runs[0].files.size() == 2);
  CHECK(t.runs[0].files[0].path == "h06.flac");
  CHECK(t.runs[0].files[0].recording == RecordingId{1});  // sorted by start, each still its recording
  CHECK(t.runs[1].files.size() == 2);
  CHECK(t.runs[1].files[1].skip_s == doctest::Approx(5.0));
  REQUIRE(t.issues.size() == 2);
  CHECK(t.issues[0].kind == TimelineIssue::Kind::gap);
  CHECK(t.issues[0].seconds == doctest::Approx(1.0));
  CHECK(t.issues[1].kind == TimelineIssue::Kind::overlap);
  CHECK(t.issues[1].seconds == doctest::Approx(5.0));
}

TEST_CASE("a change of sample rate stays in the run: the run's stream resamples it") {
  const Timeline t = build_timeline({{"a", 0, 10, 44100, 0, RecordingId{0}}, {"b", 10, 10, 48000, 0, RecordingId{1}}});
  REQUIRE(t.runs.size() == 1);
  CHECK(t.runs[0].files.size() == 2);
  CHECK(t.issues.empty());
}
