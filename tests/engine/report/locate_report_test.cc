#include "godwit/report/locate_report.h"

#include <doctest/doctest.h>

using namespace godwit;

namespace {
// Named fields: a brace list fills Match's members in order, so a sixth
// value meant as `refined` would land in `speed`.
Match match(const char* spot, const char* recording, double offset_s, double score, int polarity) {
  Match m;
  m.template_id = spot;
  m.recording = recording;
  m.offset_s = offset_s;
  m.score = score;
  m.polarity = polarity;
  m.refined = true;
  return m;
}
}  // namespace

TEST_CASE("JSON carries the documented names and values") {
  LocateResult r;
  r.analysis_rate_hz = 8000;
  r.recordings.push_back({"air,1.flac", "flac", 3600.0, 44100, 2, std::nullopt});
  r.recordings.push_back({"bad.mp3", "", 12.5, 44100, 2, Error{ErrorCode::corrupt, "decoding failed", "bad.mp3", 12.5}});
  r.matches.push_back(match("spot-a", "air,1.flac", 1234.567891234, 0.93456, -1));
  const auto j = locate_to_json(r);
  CHECK(j["analysis_rate_hz"] == 8000.0);
  CHECK(j["recordings"][0]["path"] == "air,1.flac");
  CHECK(j["recordings"][0]["duration_s"] == 3600.0);
  CHECK(j["recordings"][0]["native_rate_hz"] == 44100.0);
  CHECK(j["recordings"][1]["error"]["code"] == "corrupt");
  CHECK(j["recordings"][1]["error"]["offset_s"] == 12.5);
  CHECK(j["complete"] == false);
  const auto& m = j["matches"][0];
  CHECK(m["template"] == "spot-a");
  CHECK(m["recording"] == "air,1.flac");
  CHECK(m["offset_s"].get<double>() == doctest::Approx(1234.567891).epsilon(1e-12));
  CHECK(m["score"].get<double>() == doctest::Approx(0.9346).epsilon(1e-9));
  CHECK(m["polarity"] == -1);
  CHECK(m["refined"] == true);
}

TEST_CASE("CSV quotes fields with commas (RFC 4180)") {
  LocateResult r;
  r.matches.push_back(match("spot-a", "air,1.flac", 1.5, 0.9, 1));
  CHECK(locate_to_csv(r) == "template,recording,offset_s,score,polarity,speed,tempo\r\nspot-a,\"air,1.flac\",1.500000,0.9000,1,1.000000,1.000000\r\n");
}

TEST_CASE("read back, a match belongs to its recording's place, also when a file is listed twice") {
  LocateResult r;
  r.analysis_rate_hz = 8000;
  r.recordings.push_back({"a.wav", "wav", 60.0, 8000, 1, std::nullopt});
  r.recordings.push_back({"a.wav", "wav", 60.0, 8000, 1, std::nullopt});
  r.recordings.push_back({"a.wav.wav", "wav", 60.0, 8000, 1, std::nullopt});  // a name another's is the start of
  r.recordings.push_back({"a.wav", "wav", 60.0, 8000, 1, std::nullopt});
  // By recording, then offset and master (job.h); each copy holds the same airings.
  const std::vector<std::pair<size_t, double>> at{{0, 5.0}, {0, 30.0}, {1, 5.0}, {1, 30.0}, {2, 7.0}, {3, 5.0}};
  for (const auto& [rec, off] : at) {
    Match m = match("spot-a", r.recordings[rec].path.c_str(), off, 0.9, 1);
    m.recording_id = RecordingId{rec};
    r.matches.push_back(m);
  }
  // Two masters at one offset of one copy stay in that copy.
  Match b = match("spot-b", "a.wav", 30.0, 0.8, 1);
  b.recording_id = RecordingId{3};
  r.matches.push_back(b);
  auto back = locate_from_json(locate_to_json(r));
  REQUIRE(back.ok());
  REQUIRE(back.value().matches.size() == r.matches.size());
  for (size_t i = 0; i < r.matches.size(); ++i) {
    CAPTURE(i);
    CHECK(back.value().matches[i].recording_id == r.matches[i].recording_id);
  }
  // A match of no recording of its document: not a locate document.
  auto j = locate_to_json(r);
  j["matches"][0]["recording"] = "b.wav";
  CHECK_FALSE(locate_from_json(j).ok());
}
