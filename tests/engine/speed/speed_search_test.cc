// The speed search end to end through run_locate: airings resampled by
// known factors (libsoxr, a general-purpose resampler from Debian, makes
// them) are found with their speed and the offset of their first sample.
#include "godwit/search/job.h"

#include <doctest/doctest.h>

#include <cmath>
#include <tuple>

#include "godwit/audio/resampler.h"
#include "synth.h"
#include "test_util.h"

using namespace godwit;

namespace {

struct Airing {
  std::string id;
  double offset_s;
  double speed;
};

// Programme with the masters aired at the given speeds (replacing the
// programme there), plus white noise `snr_db` below the airing.
Samples air(double length_s, double rate, const std::map<std::string, Samples>& masters,
            const std::vector<Airing>& airings, double snr_db, uint64_t seed) {
  Samples x = synth::programme(length_s, rate, seed);
  for (const auto& a : airings) {
    // The airing at `speed`: master samples read as if at rate * speed.
    const Samples clip = resample_all(masters.at(a.id), rate * a.speed, rate);
    const size_t at = static_cast<size_t>(std::llround(a.offset_s * rate));
    for (size_t i = 0; i < clip.size() && at + i < x.size(); ++i) x[at + i] = clip[i];
    const Samples n = synth::white_noise(clip.size(), synth::rms(clip) * std::pow(10.0, -snr_db / 20), seed + at);
    for (size_t i = 0; i < n.size() && at + i < x.size(); ++i) x[at + i] += n[i];
  }
  return x;
}

}  // namespace

TEST_CASE("airings resampled by 0.5 to 4.17 % either way are found with their speed and first-sample offset") {
  const double rate = 22050;
  test::MemoryFiles files;
  std::map<std::string, Samples> masters{{"harbour-30", synth::spot(30.0, rate, 11)},
                                         {"lantern-15", synth::spot(15.0, rate, 12)}};
  for (auto& [id, m] : masters) files.files[id + ".wav"] = {m, rate};
  // 25/24 is the film-rate speed-up (common practice, from memory).
  const double speeds[] = {1.005, 1.0 / 1.005, 1.01, 1.0 / 1.01, 1.02, 1.0 / 1.02, 25.0 / 24.0, 24.0 / 25.0, 1.0};
  std::vector<Airing> airings;
  double t = 20.0 + 123.0 / rate;
  for (double s : speeds) {
    airings.push_back({"harbour-30", t, s});
    t += 50.0 + 7.0 / rate;
    airings.push_back({"lantern-15", t, s});
    t += 35.0 + 911.0 / rate;
  }
  files.files["air.flac"] = {air(t + 20, rate, masters, airings, 10, 5), rate};
  LocateJob job{{"harbour-30.wav", "lantern-15.wav"}, {"air.flac"}};
  auto r = run_locate(job, test::fast_locate_options(files));
  REQUIRE(r);
  for (const auto& a : airings) {
    CAPTURE(a.id);
    CAPTURE(a.speed);
    const Match* best = nullptr;
    for (const auto& m : r.value().matches)
      if (m.template_id == a.id && std::fabs(m.offset_s - a.offset_s) < 1.0) best = &m;
    REQUIRE(best != nullptr);
    CHECK(std::fabs(best->speed - a.speed) <= 0.0005 * a.speed);
    CHECK(std::fabs(best->offset_s - a.offset_s) <= 0.001);
  }
  CHECK(r.value().matches.size() == airings.size());
}

TEST_CASE("a polarity-inverted, sped-up airing reports both, unrelated programme gives nothing") {
  const double rate = 16000;
  test::MemoryFiles files;
  std::map<std::string, Samples> masters{{"dune-20", synth::spot(20.0, rate, 21)}};
  files.files["dune-20.wav"] = {masters["dune-20"], rate};
  Samples x = air(120, rate, masters, {{"dune-20", 40.0, 1.03}}, 20, 9);
  // Invert the airing only.
  for (size_t i = static_cast<size_t>(40.0 * rate); i < static_cast<size_t>((40.0 + 20.0 / 1.03) * rate); ++i) x[i] = -x[i];
  files.files["air.wav"] = {x, rate};
  files.files["other.wav"] = {synth::programme(600, rate, 33), rate};
  LocateJob job{{"dune-20.wav"}, {"air.wav", "other.wav"}};
  auto r = run_locate(job, test::fast_locate_options(files));
  REQUIRE(r);
  REQUIRE(r.value().matches.size() == 1);
  const Match& m = r.value().matches[0];
  CHECK(m.recording == "air.wav");
  CHECK(m.polarity == -1);
  CHECK(m.score < -0.4);
  CHECK(std::fabs(m.speed - 1.03) < 1.03 * 0.0005);
  CHECK(std::fabs(m.offset_s - 40.0) < 0.001);
}

TEST_CASE("with the speed search off, a resampled airing is not found and matches report speed 1") {
  const double rate = 8000;
  test::MemoryFiles files;
  std::map<std::string, Samples> masters{{"reed-15", synth::spot(15.0, rate, 31)}};
  files.files["reed-15.wav"] = {masters["reed-15"], rate};
  files.files["air.wav"] = {air(100, rate, masters, {{"reed-15", 10.0, 1.02}, {"reed-15", 60.0, 1.0}}, 20, 4), rate};
  LocateOptions o = test::fast_locate_options(files);
  o.speed.enabled = false;
  auto r = run_locate({{"reed-15.wav"}, {"air.wav"}}, o);
  REQUIRE(r);
  REQUIRE(r.value().matches.size() == 1);
  CHECK(std::fabs(r.value().matches[0].offset_s - 60.0) < 0.001);
  CHECK(r.value().matches[0].speed == 1.0);
}

// At 0 dB SNR (white noise as loud as the airing) the whole master's
// envelope matches a cut airing too little for the coarse step; its head
// (speed_search.h, head_fraction) matches it whole. Without the silence
// read past the recording's end, the cut by the end is never refined.
TEST_CASE("a sped-up airing cut short at 0 dB SNR is found with its speed: by the recording's end, or by other programme") {
  const double rate = 8000;
  test::MemoryFiles files;
  std::map<std::string, Samples> masters{{"gull-30", synth::spot(30.0, rate, 41)}};
  files.files["gull-30.wav"] = {masters["gull-30"], rate};
  // Cut by the end: the recording stops 55 % into an airing at 1.025.
  const double speed_end = 1.025, at_end_s = 70.0;
  Samples x = air(200, rate, masters, {{"gull-30", at_end_s, speed_end}}, 0, 17);
  x.resize(static_cast<size_t>((at_end_s + 0.55 * 30.0 / speed_end) * rate));
  files.files["ends.wav"] = {x, rate};
  // Cut by programme: 55 % of an airing at 0.98, then the programme again.
  const double speed_cut = 0.98, at_cut_s = 50.0;
  Samples y = air(160, rate, masters, {{"gull-30", at_cut_s, speed_cut}}, 0, 18);
  const Samples rest = synth::programme(160, rate, 99);
  for (auto i = static_cast<size_t>((at_cut_s + 0.55 * 30.0 / speed_cut) * rate); i < y.size(); ++i) y[i] = rest[i];
  files.files["cut.wav"] = {y, rate};
  LocateOptions o = test::fast_locate_options(files);
  auto r = run_locate({{"gull-30.wav"}, {"ends.wav", "cut.wav"}}, o);
  REQUIRE(r);
  for (const auto& [recording, at_s, speed] :
       {std::tuple{"ends.wav", at_end_s, speed_end}, std::tuple{"cut.wav", at_cut_s, speed_cut}}) {
    CAPTURE(std::string(recording));
    const Match* found = nullptr;
    for (const auto& m : r.value().matches)
      if (m.recording == recording && std::fabs(m.offset_s - at_s) < 1.0) found = &m;
    REQUIRE(found != nullptr);
    CHECK(std::fabs(found->speed - speed) <= 0.0005 * speed);
    CHECK(std::fabs(found->offset_s - at_s) <= 0.001);
  }
  CHECK(r.value().matches.size() == 2);
}
