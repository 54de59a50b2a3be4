// The screened search (screen_options.h) against the full search, which
// reference_test.cc checks against numpy and scipy: on airings through an
// air chain (band limits, compression, cuts, noise, inverted polarity,
// airings cut by the recording's ends), the screened search must return
// the same detections, at the same offsets and scores.
#include <doctest/doctest.h>

#include <cmath>

#include "air_chain.h"
#include "godwit/search/job.h"
#include "synth.h"
#include "test_util.h"

using namespace godwit;

namespace {

constexpr double kRate = 16000;
constexpr double kLength_s = 480;  // long enough that the kept stream is trimmed several times

struct Airing {
  size_t master = 0;
  double offset_s = 0;
  synth::AirChain chain;
};

synth::AirChain chain(double snr_db) {
  synth::AirChain c;
  c.snr_db = snr_db;
  return c;
}

struct Day {
  test::MemoryFiles files;
  LocateJob job;
  std::vector<Airing> airings;
};

Day make_day() {
  Day d;
  // Masters of two FFT sizes in the exact bank (2^18 and 2^19 points at 8 kHz).
  const std::vector<double> lengths_s{6, 8, 10, 12, 15, 30};
  std::vector<Samples> masters;
  for (size_t i = 0; i < lengths_s.size(); ++i) {
    masters.push_back(synth::spot(lengths_s[i], kRate, 40 + i));
    const std::string name = "spot" + std::to_string(i) + ".wav";
    d.files.files[name] = {masters.back(), kRate};
    d.job.templates.push_back(name);
  }
  auto telephone = chain(3);
  telephone.eq = {{synth::EqStage::highpass, 300, 0.707, 0}, {synth::EqStage::lowpass, 3400, 0.707, 0}};
  telephone.compressed = true;
  telephone.comp_threshold_rel_db = -12, telephone.comp_ratio = 4, telephone.comp_attack_ms = 5,
  telephone.comp_release_ms = 100;
  auto cut = chain(6);
  cut.coverage = 0.55;
  cut.eq = {{synth::EqStage::highpass, 200, 0.707, 0}};
  auto inverted = chain(1);
  inverted.polarity = -1;
  inverted.eq = {{synth::EqStage::lowpass, 4000, 0.707, 0}};
  d.airings = {{0, 20, chain(20)},       {1, 70, telephone}, {2, 150, cut},
               {3, 250, inverted},       {4, -4, chain(10)}, {0, kLength_s - 3, chain(10)},
               {2, 330.5, telephone}, {5, 380, cut}};
  Samples x = synth::programme(kLength_s, kRate, 7);
  uint64_t seed = 100;
  for (const auto& a : d.airings) {
    const Samples aired = synth::render_chain(masters[a.master], kRate, a.chain, kRate);
    const Samples noise = synth::white_noise(aired.size(), synth::rms(aired) * std::pow(10.0, -a.chain.snr_db / 20), ++seed);
    const auto at = static_cast<int64_t>(std::llround(a.offset_s * kRate));
    for (size_t i = 0; i < aired.size(); ++i) {
      const int64_t k = at + static_cast<int64_t>(i);
      if (k >= 0 && k < static_cast<int64_t>(x.size())) x[static_cast<size_t>(k)] = aired[i] + noise[i];
    }
  }
  d.files.files["air.wav"] = {x, kRate};
  d.job.recordings = {"air.wav"};
  return d;
}

LocateResult run(const Day& d, bool screened, double screen_threshold = -1, double floor_k = -1) {
  auto o = test::fast_locate_options(d.files);
  if (floor_k >= 0) o.picker.floor_k = floor_k;
  o.speed.enabled = false;  // the plain search alone: the screen replaces it
  o.screen.enabled = screened;
  if (screen_threshold >= 0) o.screen.threshold = screen_threshold;
  auto r = run_locate(d.job, o);
  REQUIRE(r.ok());
  return r.value();
}

bool found(const LocateResult& r, const Airing& a) {
  const std::string id = "spot" + std::to_string(a.master);
  for (const auto& m : r.matches)
    if (m.template_id == id && std::fabs(m.offset_s - a.offset_s) < 1e-3) return true;
  return false;
}

void same_detections(const LocateResult& full, const LocateResult& screened) {
  REQUIRE(screened.matches.size() == full.matches.size());
  for (size_t i = 0; i < full.matches.size(); ++i) {
    const auto &f = full.matches[i], &s = screened.matches[i];
    CAPTURE(f.template_id);
    CAPTURE(f.offset_s);
    CHECK(s.template_id == f.template_id);
    CHECK(s.polarity == f.polarity);
    CHECK(std::fabs(s.offset_s - f.offset_s) < 1e-6);
    CHECK(std::fabs(s.score - f.score) < 1e-4);
  }
}

}  // namespace

TEST_CASE("the screened search returns the full search's detections on airings through an air chain") {
  const Day d = make_day();
  const LocateResult full = run(d, false);
  // The full search finds every planted airing (the comparison is not empty).
  for (const auto& a : d.airings) {
    CAPTURE(a.master);
    CAPTURE(a.offset_s);
    CHECK(found(full, a));
  }
  const LocateResult screened = run(d, true);
  same_detections(full, screened);
  // And it scored exactly only a small part of the recording: spans of
  // about 9 s (17 segments of 4096 samples at 8 kHz) per (span, master).
  CHECK(screened.exact_span_masters > 0);
  CHECK(static_cast<double>(screened.exact_span_masters) * 9.0 < 0.25 * kLength_s * static_cast<double>(d.job.templates.size()));
  CHECK(full.exact_span_masters == 0);
}

TEST_CASE("a screen set too strict loses the weak airings the comparison above would catch") {
  const Day d = make_day();
  const LocateResult strict = run(d, true, 0.9);
  size_t lost = 0;
  for (const auto& a : d.airings) lost += found(strict, a) ? 0 : 1;
  CHECK(lost >= 3);
  CHECK(found(strict, d.airings[0]));  // the clean airing still passes
}

TEST_CASE("where the picker's noise floor decides, the screened search decides alike") {
  // A floor 40 robust deviations up binds on the weak airings: each
  // detection kept must have been judged against the floor of the same
  // 8 s of scores on each side as in the full search.
  const Day d = make_day();
  const LocateResult full = run(d, false, -1, 40);
  const LocateResult screened = run(d, true, -1, 40);
  CHECK(full.matches.size() < d.airings.size());  // the floor decided somewhere
  CHECK(!full.matches.empty());
  same_detections(full, screened);
}
