// Tempo changes with the pitch kept, end to end through run_locate: the
// airings are made by two outside time-stretchers from Debian, sox's
// `tempo` effect (WSOLA, overlap-add) and rubberband (a phase vocoder;
// package rubberband-cli), with known factors; the search must find them
// with that factor as `tempo` (speed 1) and the offset of the first sample
// the stretcher wrote. Both tools keep the first output sample at the first
// input sample (their documented behaviour: sox trims its own latency,
// rubberband compensates its own by default).
#include "godwit/search/job.h"

#include <doctest/doctest.h>

#include <cmath>
#include <filesystem>

#include <unistd.h>

#include "godwit/audio/resampler.h"
#include "synth.h"
#include "test_util.h"

using namespace godwit;

namespace {

enum class Tool { sox, rubberband, resample };

struct Airing {
  std::string id;
  double offset_s;
  double factor;  // tempo (sox, rubberband) or speed (resample)
  Tool tool;
};

Samples stretched(const Samples& master, double rate, double factor, Tool tool) {
  if (tool == Tool::resample) return resample_all(master, rate * factor, rate);
  const auto dir = std::filesystem::temp_directory_path() / ("godwit-tempo-test-" + std::to_string(::getpid()));
  std::filesystem::create_directories(dir);
  Samples y = tool == Tool::sox ? synth::sox_tempo(master, rate, factor, dir.string())
                                : synth::rubberband_tempo(master, rate, factor, dir.string());
  std::filesystem::remove_all(dir);
  return y;
}

// Programme with the airings replacing it, white noise `snr_db` below each.
Samples air(double length_s, double rate, const std::map<std::string, Samples>& masters,
            const std::vector<Airing>& airings, double snr_db, uint64_t seed) {
  Samples x = synth::programme(length_s, rate, seed);
  for (const auto& a : airings) {
    const Samples clip = stretched(masters.at(a.id), rate, a.factor, a.tool);
    REQUIRE_MESSAGE(!clip.empty(), "sox and rubberband must be installed (scripts/install-deps.sh)");
    const size_t at = static_cast<size_t>(std::llround(a.offset_s * rate));
    for (size_t i = 0; i < clip.size() && at + i < x.size(); ++i) x[at + i] = clip[i];
    const Samples n = synth::white_noise(clip.size(), synth::rms(clip) * std::pow(10.0, -snr_db / 20), seed + at);
    for (size_t i = 0; i < n.size() && at + i < x.size(); ++i) x[at + i] += n[i];
  }
  return x;
}

const Match* near(const LocateResult& r, const std::string& id, double at_s) {
  const Match* best = nullptr;
  for (const auto& m : r.matches)
    if (m.template_id == id && std::fabs(m.offset_s - at_s) < 1.0) best = &m;
  return best;
}

}  // namespace

TEST_CASE("airings time-stretched by sox and rubberband within 5 % either way are found with their tempo and offset") {
  const double rate = 16000;
  test::MemoryFiles files;
  std::map<std::string, Samples> masters{{"harbour-30", synth::spot(30.0, rate, 61)},
                                         {"lantern-20", synth::spot(20.0, rate, 62)}};
  for (auto& [id, m] : masters) files.files[id + ".wav"] = {m, rate};
  const double tempos[] = {0.96, 1.04, 0.98, 1.02, 1.0 / 1.05, 1.05, 0.99};
  std::vector<Airing> airings;
  double t = 15.0 + 321.0 / rate;
  int k = 0;
  for (double f : tempos)
    for (Tool tool : {Tool::sox, Tool::rubberband}) {
      const std::string id = k++ % 2 ? "lantern-20" : "harbour-30";
      airings.push_back({id, t, f, tool});
      t += 45.0 + 17.0 / rate;
    }
  files.files["air.flac"] = {air(t + 20, rate, masters, airings, 10, 7), rate};
  auto r = run_locate({{"harbour-30.wav", "lantern-20.wav"}, {"air.flac"}}, test::fast_locate_options(files));
  REQUIRE(r);
  for (const auto& a : airings) {
    CAPTURE(a.id);
    CAPTURE(a.factor);
    CAPTURE(a.tool == Tool::sox ? "sox" : "rubberband");
    const Match* m = near(r.value(), a.id, a.offset_s);
    REQUIRE(m != nullptr);
    CHECK(m->speed == 1.0);
    CHECK(std::fabs(m->tempo / a.factor - 1) <= 0.002);    // the target: 0.2 %
    CHECK(std::fabs(m->offset_s - a.offset_s) <= 0.020);  // and 20 ms
    CHECK(m->score >= 0.5);
  }
  CHECK(r.value().matches.size() == airings.size());
}

TEST_CASE("a resampled airing is a speed change, a stretched one a tempo change, unrelated audio gives nothing") {
  const double rate = 8000;
  test::MemoryFiles files;
  std::map<std::string, Samples> masters{{"dune-20", synth::spot(20.0, rate, 71)}};
  files.files["dune-20.wav"] = {masters["dune-20"], rate};
  // The time-reversed master stretched by sox: the same spectrum and
  // envelope statistics as an airing, none of its order; and programme.
  std::map<std::string, Samples> other{{"dune-20", Samples(masters["dune-20"].rbegin(), masters["dune-20"].rend())}};
  files.files["air.wav"] = {air(150, rate, masters, {{"dune-20", 20.0, 1.03, Tool::resample}, {"dune-20", 80.0, 1.03, Tool::sox}},
                                15, 3),
                            rate};
  files.files["other.wav"] = {air(300, rate, other, {{"dune-20", 40.0, 0.97, Tool::sox}, {"dune-20", 140.0, 1.03, Tool::rubberband}}, 15, 5),
                              rate};
  auto r = run_locate({{"dune-20.wav"}, {"air.wav", "other.wav"}}, test::fast_locate_options(files));
  REQUIRE(r);
  const Match* speed = near(r.value(), "dune-20", 20.0);
  REQUIRE(speed != nullptr);
  CHECK(std::fabs(speed->speed - 1.03) <= 0.0005);
  CHECK(speed->tempo == 1.0);
  const Match* tempo = near(r.value(), "dune-20", 80.0);
  REQUIRE(tempo != nullptr);
  CHECK(tempo->speed == 1.0);
  CHECK(std::fabs(tempo->tempo - 1.03) <= 0.002);
  for (const auto& m : r.value().matches) CHECK(m.recording == "air.wav");
  CHECK(r.value().matches.size() == 2);
}

TEST_CASE("with the tempo fit off, a stretched airing is not found") {
  const double rate = 8000;
  test::MemoryFiles files;
  std::map<std::string, Samples> masters{{"reed-15", synth::spot(15.0, rate, 81)}};
  files.files["reed-15.wav"] = {masters["reed-15"], rate};
  files.files["air.wav"] = {air(80, rate, masters, {{"reed-15", 30.0, 0.96, Tool::sox}}, 15, 9), rate};
  LocateOptions o = test::fast_locate_options(files);
  o.speed.max_tempo_deviation = 0;
  auto r = run_locate({{"reed-15.wav"}, {"air.wav"}}, o);
  REQUIRE(r);
  CHECK(r.value().matches.empty());
}
