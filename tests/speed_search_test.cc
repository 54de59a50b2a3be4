// The speed search end to end through run_locate: airings resampled by
// known factors (libsoxr, a general-purpose resampler from Debian, makes
// them) are found with their speed and the offset of their first sample.
#include "godwit/job.h"

#include <doctest/doctest.h>

#include <cmath>
#include <cstdio>

#include "godwit/resampler.h"
#include "synth.h"
#include "test_util.h"

using namespace godwit;

namespace {

struct Airing {
  std::string id;
  double offset_s;
  double speed;
};

LocateOptions options_for(const test::MemoryFiles& files) {
  LocateOptions o;
  o.opener = files.opener();
  o.correlator.planner = Planner::estimate;
  o.bank.max_fft_size = 1 << 18;
  return o;
}

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
  auto r = run_locate(job, options_for(files));
  REQUIRE(r);
  for (const auto& m : r.value().matches)
    std::printf("%s %.5f score %.3f speed %.6f\n", m.template_id.c_str(), m.offset_s, m.score, m.speed);
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
