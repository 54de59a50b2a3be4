#include "godwit/report/excerpt.h"

#include <doctest/doctest.h>

#include <cmath>
#include <fstream>
#include <map>

#include "godwit/audio/analysis_stream.h"
#include "test_util.h"

using namespace godwit;

namespace {

constexpr double kPi = 3.14159265358979323846;

Samples tone(double hz, double rate_hz, double seconds, double amplitude = 0.3) {
  Samples s(static_cast<size_t>(std::llround(rate_hz * seconds)));
  for (size_t i = 0; i < s.size(); ++i)
    s[i] = static_cast<float>(amplitude * std::sin(2 * kPi * hz * static_cast<double>(i) / rate_hz));
  return s;
}

// Power of `hz` in x[from_s, to_s) (Goertzel), per sample.
double power_at(const Samples& x, double rate_hz, double hz, double from_s, double to_s) {
  const size_t a = static_cast<size_t>(from_s * rate_hz), b = std::min(x.size(), static_cast<size_t>(to_s * rate_hz));
  const double w = 2 * std::cos(2 * kPi * hz / rate_hz);
  double s1 = 0, s2 = 0;
  for (size_t i = a; i < b; ++i) {
    const double s0 = x[i] + w * s1 - s2;
    s2 = s1;
    s1 = s0;
  }
  return (s1 * s1 + s2 * s2 - w * s1 * s2) / static_cast<double>(std::max<size_t>(1, b - a));
}

// What a sink was given, by name.
struct Kept {
  std::map<std::string, std::string> files;
  ExcerptSink sink() {
    return [this](const std::string& name, const std::string& bytes) -> Status {
      files[name] = bytes;
      return ok_status();
    };
  }
};

// Decodes an encoded excerpt back (libsndfile's Opus decoder, through the
// engine's file source), mono.
Samples decode(const std::string& bytes, double& rate_hz) {
  test::TempDir dir;
  const std::string path = dir.file("x.opus");
  std::ofstream(path, std::ios::binary).write(bytes.data(), static_cast<std::streamsize>(bytes.size()));
  auto src = open_audio_file(path);
  REQUIRE(src.ok());
  rate_hz = src.value()->info().native_rate_hz;
  auto s = decode_all(*src.value(), 0);
  REQUIRE(s.ok());
  return s.value();
}

// A day of one run of two files ("a" at 16 kHz, "b" at 22.05 kHz, 10 s
// each) and a 4 s master ("spot", 16 kHz); the airing of `placement` slot.
ReconcileResult one_airing(double run_offset_s, const std::string& slot) {
  ReconcileResult r;
  r.runs = {{{"a", 160000, 0, 16000}, {"b", 220500, 0, 22050}}};
  r.spots["spot"] = {"spot", 4.0, {"Title", "Advertiser", ""}};
  Placement p;
  p.slot = slot;
  p.spot = "spot";
  r.placements.push_back(p);
  AiringRecord a;
  a.spot = "spot";
  a.run = RunId{0};
  a.run_offset_s = run_offset_s;
  a.aired_s = 1000 + run_offset_s;
  a.length_s = 4;
  a.coverage = 1;
  r.airings.push_back(a);
  Verdict v;
  v.placement = 0;
  v.status = VerdictStatus::aired;
  v.airing = 0;
  r.verdicts.push_back(v);
  return r;
}

test::MemoryFiles two_files() {
  test::MemoryFiles files;
  files.files["a"] = {tone(1000, 16000, 10), 16000};
  files.files["b"] = {tone(3000, 22050, 10), 22050};
  files.files["spot"] = {tone(500, 16000, 4), 16000};
  return files;
}

}  // namespace

TEST_CASE("an airing across a file boundary is cut from both files, 2 s either side, at the rate of the file it starts in") {
  const auto files = two_files();
  const ReconcileResult r = one_airing(8.0, "S001");  // 6 s to 14 s of the run: 4 s of "a", then 4 s of "b"
  Kept kept;
  auto l = make_excerpts(r, files.opener(), {}, kept.sink());
  REQUIRE(l.ok());
  CHECK(l.value().problems.empty());
  REQUIRE(l.value().airings.count(0) == 1);
  const ExcerptRef& e = l.value().airings.at(0);
  CHECK(e.file == "listen/S001_19700101T001648.000.opus");  // 1008 s after the epoch of the local clock
  CHECK(e.rate_hz == 16000);
  CHECK(e.from_s == doctest::Approx(-2.0));
  CHECK(e.duration_s == doctest::Approx(8.0));
  CHECK(e.envelope.dbfs.size() == 40);  // 8 s in steps of 0.2 s
  // A 0.3 sine is -13.5 dBFS RMS (0.3 / sqrt 2).
  CHECK(e.envelope.dbfs[5] == doctest::Approx(20 * std::log10(0.3 / std::sqrt(2.0))).epsilon(0.01));
  REQUIRE(kept.files.count("S001_19700101T001648.000.opus") == 1);
  CHECK(e.bytes == kept.files["S001_19700101T001648.000.opus"].size());
  double rate = 0;
  const Samples x = decode(kept.files["S001_19700101T001648.000.opus"], rate);
  // The encoded length is the cut's, to a millisecond (Ogg Opus end trimming).
  CHECK(static_cast<double>(x.size()) / rate == doctest::Approx(8.0).epsilon(0.001 / 8));
  // The first file's tone, then the second's, switching at 4 s (the files'
  // boundary): the stream crossed it.
  CHECK(power_at(x, rate, 1000, 0.5, 3.5) > 100 * power_at(x, rate, 3000, 0.5, 3.5));
  CHECK(power_at(x, rate, 3000, 4.5, 7.5) > 100 * power_at(x, rate, 1000, 4.5, 7.5));
  // And the master, once.
  REQUIRE(l.value().masters.count("spot") == 1);
  CHECK(l.value().masters.at("spot").file == "listen/master_spot.opus");
  CHECK(l.value().masters.at("spot").duration_s == doctest::Approx(4.0));
  CHECK(kept.files.size() == 2);
}

TEST_CASE("an airing near the start of the recordings keeps what was recorded before it") {
  const auto files = two_files();
  Kept kept;
  auto l = make_excerpts(one_airing(1.0, "S1"), files.opener(), {}, kept.sink());
  REQUIRE(l.ok());
  const ExcerptRef& e = l.value().airings.at(0);
  CHECK(e.from_s == doctest::Approx(-1.0));
  CHECK(e.duration_s == doctest::Approx(7.0));  // 1 s before, 4 s of airing, 2 s after
  // An airing at the very end: 2 s before it, and what there is of it.
  auto end = make_excerpts(one_airing(18.0, "S2"), files.opener(), {}, kept.sink());
  REQUIRE(end.ok());
  CHECK(end.value().airings.at(0).duration_s == doctest::Approx(4.0));  // 16 s to the run's end at 20 s
  CHECK(end.value().airings.at(0).rate_hz == 22050);                     // it starts in "b"
}

TEST_CASE("an unreadable recording is a problem of its excerpt, not of the others") {
  auto files = two_files();
  files.files.erase("a");
  Kept kept;
  ReconcileResult r = one_airing(2.0, "S1");
  auto l = make_excerpts(r, files.opener(), {}, kept.sink());
  REQUIRE(l.ok());
  CHECK(l.value().airings.empty());
  REQUIRE(l.value().problems.size() == 1);
  CHECK(l.value().problems[0].find("S1") != std::string::npos);
  CHECK(kept.files.empty());
}

TEST_CASE("a sink that fails stops the excerpts with its error") {
  const auto files = two_files();
  auto l = make_excerpts(one_airing(8.0, "S1"), files.opener(), {},
                         [](const std::string&, const std::string&) -> Status {
                           return Error{ErrorCode::io, "disk full", "", std::nullopt};
                         });
  REQUIRE_FALSE(l.ok());
  CHECK(l.error().code == ErrorCode::io);
}

TEST_CASE("excerpt names are safe on every file system and unique") {
  CHECK(safe_file_name("S 1/2:3") == "S_1_2_3");
  CHECK(safe_file_name(".hidden") == "_.hidden");
  CHECK(safe_file_name("") == "_");
  CHECK(safe_file_name("caf\xC3\xA9") == "caf__");
  CHECK(safe_file_name(std::string(100, 'x'), 10) == std::string(10, 'x'));
  // Two slots that read alike once made safe, aired at the same time.
  const auto files = two_files();
  ReconcileResult r = one_airing(8.0, "S/1");
  r.placements.push_back(r.placements[0]);
  r.placements[1].slot = "S:1";
  r.airings.push_back(r.airings[0]);
  Verdict v = r.verdicts[0];
  v.placement = 1;
  v.airing = 1;
  r.verdicts.push_back(v);
  Kept kept;
  auto l = make_excerpts(r, files.opener(), {}, kept.sink());
  REQUIRE(l.ok());
  CHECK(l.value().airings.at(0).file == "listen/S_1_19700101T001648.000.opus");
  CHECK(l.value().airings.at(1).file == "listen/S_1_19700101T001648.000-2.opus");
}

TEST_CASE("the level envelope is the RMS per step in dBFS") {
  Samples x(1000, 0.5f);
  std::fill(x.begin() + 500, x.end(), 0.0f);
  const LevelEnvelope e = level_envelope(x.data(), x.size(), 1000, 0.25);
  REQUIRE(e.dbfs.size() == 4);
  CHECK(e.dbfs[0] == doctest::Approx(20 * std::log10(0.5)));
  CHECK(e.dbfs[3] <= -120.0f + 1e-3f);
}
