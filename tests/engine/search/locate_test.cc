// End to end through run_locate, with in-memory files served by the same
// opener seam that real files use.
#include "godwit/search/job.h"

#include <doctest/doctest.h>

#include <cmath>

#include "godwit/audio/resampler.h"
#include "synth.h"
#include "test_util.h"

using namespace godwit;

namespace {

struct Planted {
  std::string id;
  double offset_s;
  int polarity;
};

// A recording at `rate` with the given masters planted over programme
// audio, plus white noise at `snr_db` below the programme.
Samples make_recording(double length_s, double rate, const std::map<std::string, Samples>& masters,
                       const std::vector<Planted>& plants, double snr_db, uint64_t seed) {
  Samples x = synth::programme(length_s, rate, seed);
  for (const auto& p : plants) {
    const Samples& m = masters.at(p.id);
    const size_t at = static_cast<size_t>(std::llround(p.offset_s * rate));
    for (size_t i = 0; i < m.size() && at + i < x.size(); ++i) x[at + i] = static_cast<float>(p.polarity * 0.8 * m[i]);
  }
  const Samples n = synth::white_noise(x.size(), synth::rms(x) * std::pow(10.0, -snr_db / 20), seed + 1);
  for (size_t i = 0; i < x.size(); ++i) x[i] += n[i];
  return x;
}

}  // namespace

TEST_CASE("planted clips are found within one analysis sample, and within 0.5 ms after refinement") {
  test::MemoryFiles files;
  const double rate = 44100;
  std::map<std::string, Samples> masters{{"alpha", synth::spot(4.0, rate, 1)}, {"beta", synth::spot(7.0, rate, 2)}};
  for (auto& [id, m] : masters) files.files[id + ".wav"] = {m, rate};
  // Offsets on whole native frames (the truth is what was planted).
  const std::vector<Planted> plants{{"alpha", 3.0 + 12345.0 / rate, 1},
                                    {"beta", 21.0 + 777.0 / rate, 1},
                                    {"alpha", 40.0 + 3.0 / rate, -1}};
  files.files["air.flac"] = {make_recording(60.0, rate, masters, plants, 20, 3), rate};
  LocateJob job{{"alpha.wav", "beta.wav"}, {"air.flac"}};
  for (bool refine : {false, true}) {
    CAPTURE(refine);
    auto o = test::fast_locate_options(files);
    o.refine = refine;
    auto r = run_locate(job, o);
    REQUIRE(r.ok());
    const auto& m = r.value().matches;
    REQUIRE(m.size() == plants.size());
    for (size_t i = 0; i < plants.size(); ++i) {
      CAPTURE(i);
      CHECK(m[i].template_id == plants[i].id);
      CHECK(m[i].polarity == plants[i].polarity);
      CHECK(std::fabs(m[i].score) > 0.9);
      CHECK(m[i].refined == refine);
      const double err_s = std::fabs(m[i].offset_s - plants[i].offset_s);
      CHECK(err_s < (refine ? 0.5e-3 : 1.0 / 8000));
      if (refine) CHECK(err_s < 0.1e-3);
    }
  }
}

TEST_CASE("a master at 48 kHz is found in a 22.05 kHz recording") {
  test::MemoryFiles files;
  const Samples master = synth::spot(5.0, 48000, 4);
  files.files["promo.wav"] = {master, 48000};
  const Samples at_rec = resample_all(master, 48000, 22050);
  Samples x = synth::programme(40.0, 22050, 5);
  const size_t at = 300000;  // 13.605442 s
  for (size_t i = 0; i < at_rec.size(); ++i) x[at + i] = at_rec[i];
  files.files["air.mp3"] = {x, 22050};
  auto r = run_locate({{"promo.wav"}, {"air.mp3"}}, test::fast_locate_options(files));
  REQUIRE(r.ok());
  REQUIRE(r.value().matches.size() == 1);
  CHECK(std::fabs(r.value().matches[0].offset_s - at / 22050.0) < 0.5e-3);
  CHECK(r.value().recordings[0].native_rate_hz == 22050);
}

TEST_CASE("a clip straddling a block boundary is found exactly once") {
  test::MemoryFiles files;
  const Samples master = synth::spot(2.0, 8000, 6);  // 16000 samples
  files.files["m.wav"] = {master, 8000};
  // FFT 32768, step 32768 - 16000 + 1 = 16769: blocks start at multiples of it.
  for (size_t at : {16769ul - 8000ul, 16769ul - 1ul, 2 * 16769ul - 15999ul}) {
    CAPTURE(at);
    Samples x = synth::programme(12.0, 8000, 7);
    for (size_t i = 0; i < master.size(); ++i) x[at + i] = master[i];
    files.files["air.wav"] = {x, 8000};
    auto o = test::fast_locate_options(files);
    o.bank.fixed_fft_size = 32768;
    auto r = run_locate({{"m.wav"}, {"air.wav"}}, o);
    REQUIRE(r.ok());
    REQUIRE(r.value().matches.size() == 1);
    CHECK(std::fabs(r.value().matches[0].offset_s - static_cast<double>(at) / 8000.0) < 1e-4);
  }
}

TEST_CASE("a recording that breaks mid-stream keeps the matches found before the break") {
  test::MemoryFiles files;
  const double rate = 16000;
  std::map<std::string, Samples> masters{{"s", synth::spot(3.0, rate, 8)}};
  files.files["s.wav"] = {masters["s"], rate};
  files.files["air.wav"] = {make_recording(60.0, rate, masters, {{"s", 5.0, 1}, {"s", 45.0, 1}}, 20, 9), rate,
                            static_cast<int64_t>(30 * rate)};
  files.files["next.wav"] = {make_recording(20.0, rate, masters, {{"s", 10.0, 1}}, 20, 10), rate};
  auto r = run_locate({{"s.wav"}, {"air.wav", "missing.wav", "next.wav"}}, test::fast_locate_options(files));
  REQUIRE(r.ok());
  const auto& res = r.value();
  REQUIRE(res.recordings.size() == 3);
  REQUIRE(res.recordings[0].error.has_value());
  CHECK(res.recordings[0].error->code == ErrorCode::corrupt);
  CHECK(*res.recordings[0].error->offset_s == doctest::Approx(30.0));
  CHECK(res.recordings[0].duration_s == doctest::Approx(30.0));
  REQUIRE(res.recordings[1].error.has_value());
  CHECK(res.recordings[1].error->code == ErrorCode::not_found);
  CHECK(!res.recordings[2].error.has_value());
  CHECK(!res.complete());
  REQUIRE(res.matches.size() == 2);  // 5 s in the broken file, 10 s in the next one
  CHECK(res.matches[0].recording == "air.wav");
  CHECK(res.matches[0].offset_s == doctest::Approx(5.0).epsilon(1e-4));
  CHECK(res.matches[1].recording == "next.wav");
}

TEST_CASE("no false detections on unrelated programme, or on silence with dropouts and spikes") {
  test::MemoryFiles files;
  std::vector<std::string> ids;
  for (uint64_t s = 0; s < 4; ++s) {
    ids.push_back("spot" + std::to_string(s) + ".wav");
    files.files[ids.back()] = {synth::spot(10.0 + 5.0 * static_cast<double>(s), 8000, 100 + s), 8000};
  }
  files.files["programme.wav"] = {synth::programme(600.0, 8000, 200), 8000};
  Samples silence(600 * 8000, 0.0f);
  Samples dither = synth::white_noise(silence.size(), 2e-5, 1);
  for (size_t i = 0; i < silence.size(); ++i) silence[i] = (i / 80000) % 3 == 0 ? 0.0f : dither[i];
  for (size_t i = 4000; i < silence.size(); i += 96000) silence[i] = (i % 2) ? 1.0f : -1.0f;
  files.files["silence.wav"] = {silence, 8000};
  auto r = run_locate({ids, {"programme.wav", "silence.wav"}}, test::fast_locate_options(files));
  REQUIRE(r.ok());
  CHECK(r.value().matches.empty());
}

TEST_CASE("job-level errors: duplicate ids, unreadable master, no recordings, cancellation") {
  test::MemoryFiles files;
  files.files["a/x.wav"] = {synth::spot(2.0, 8000, 1), 8000};
  files.files["b/x.wav"] = {synth::spot(2.0, 8000, 2), 8000};
  files.files["air.wav"] = {synth::programme(30.0, 8000, 3), 8000};
  auto o = test::fast_locate_options(files);
  auto dup = run_locate({{"a/x.wav", "b/x.wav"}, {"air.wav"}}, o);
  REQUIRE(!dup.ok());
  CHECK(dup.error().code == ErrorCode::usage);
  auto missing = run_locate({{"nope.wav"}, {"air.wav"}}, o);
  REQUIRE(!missing.ok());
  CHECK(missing.error().code == ErrorCode::not_found);
  CHECK(missing.error().path == "nope.wav");
  CHECK(run_locate({{"a/x.wav"}, {}}, o).error().code == ErrorCode::usage);
  o.should_stop = [] { return true; };
  CHECK(run_locate({{"a/x.wav"}, {"air.wav"}}, o).error().code == ErrorCode::cancelled);
}

TEST_CASE("progress reaches 1 and recordings of unknown length still work") {
  test::MemoryFiles files;
  files.files["m.wav"] = {synth::spot(2.0, 8000, 1), 8000};
  files.files["air.wav"] = {synth::programme(60.0, 8000, 2), 8000};
  auto o = test::fast_locate_options(files);
  double last = -1;
  o.on_progress = [&](const Progress& p) {
    CHECK(p.fraction >= last);
    last = p.fraction;
  };
  auto r = run_locate({{"m.wav"}, {"air.wav"}}, o);
  REQUIRE(r.ok());
  CHECK(last == doctest::Approx(1.0));
  CHECK(r.value().recordings[0].duration_s == doctest::Approx(60.0));
}
