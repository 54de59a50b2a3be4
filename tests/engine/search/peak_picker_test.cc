#include "godwit/search/peak_picker.h"

#include <doctest/doctest.h>

#include <algorithm>
#include <cmath>

#include "synth.h"

using namespace godwit;

namespace {

std::vector<Candidate> pick(const std::vector<float>& trace, size_t suppress, PickerOptions o = {}, size_t chunk = 5000) {
  PeakPicker p(suppress, o);
  for (size_t i = 0; i < trace.size(); i += chunk)
    p.feed(static_cast<int64_t>(i), trace.data() + i, std::min(chunk, trace.size() - i));
  p.finish();
  return p.take();
}

std::vector<float> noise_trace(size_t n, double sigma, uint64_t seed) {
  synth::Rng rng(seed);
  std::vector<float> t(n);
  for (auto& v : t) v = static_cast<float>(sigma * rng.gaussian());
  return t;
}

}  // namespace

TEST_CASE("one candidate per template length, the strongest peak wins") {
  auto tr = noise_trace(200000, 0.01, 1);
  tr[50000] = 0.9f;
  tr[50000 + 3000] = 0.6f;   // within the suppression span of the first
  tr[120000] = 0.7f;
  auto c = pick(tr, 8000);
  REQUIRE(c.size() == 2);
  CHECK(c[0].index == 50000);
  CHECK(c[1].index == 120000);
}

TEST_CASE("strong negative peaks are polarity-inverted airings") {
  auto tr = noise_trace(100000, 0.01, 2);
  tr[30000] = -0.8f;
  auto c = pick(tr, 8000);
  REQUIRE(c.size() == 1);
  CHECK(c[0].polarity == -1);
  CHECK(c[0].score == doctest::Approx(-0.8).epsilon(0.01));
}

TEST_CASE("the noise-floor threshold rejects peaks that only clear the absolute one") {
  // Noisy region (sigma 0.06): 0.45 is 7.5 sigma, under median + 10 x MAD-sigma.
  auto tr = noise_trace(200000, 0.06, 3);
  for (auto& v : tr) v = std::clamp(v, -0.3f, 0.3f);
  tr[100000] = 0.45f;
  CHECK(pick(tr, 8000).empty());
  // The same peak on a quiet trace is a detection.
  auto quiet = noise_trace(200000, 0.01, 4);
  quiet[100000] = 0.45f;
  CHECK(pick(quiet, 8000).size() == 1);
}

TEST_CASE("parabolic interpolation recovers a sub-sample peak") {
  // Samples of a parabola-topped peak centred at 1000.3.
  std::vector<float> tr(50000, 0.0f);
  for (int d = -3; d <= 3; ++d) {
    const double u = 1000 + d - 1000.3;
    tr[static_cast<size_t>(1000 + d)] = static_cast<float>(0.9 - 0.05 * u * u);
  }
  auto c = pick(tr, 4000);
  REQUIRE(c.size() == 1);
  CHECK(c[0].offset == doctest::Approx(1000.3).epsilon(1e-6));
}

TEST_CASE("a peak across feed boundaries and segment boundaries is found once") {
  for (size_t at : {4095ul, 4096ul, 4097ul, 8191ul}) {
    auto tr = noise_trace(60000, 0.01, 5);
    tr[at - 1] = 0.7f;
    tr[at] = 0.9f;
    tr[at + 1] = 0.7f;
    for (size_t chunk : {1ul, 4096ul, at, at + 1}) {
      auto c = pick(tr, 2000, {}, chunk);
      REQUIRE(c.size() == 1);
      CHECK(c[0].index == static_cast<int64_t>(at));
      CHECK(c[0].offset == doctest::Approx(static_cast<double>(at)));
    }
  }
}

TEST_CASE("silence (no scores) gives no candidates and no division by zero") {
  std::vector<float> tr(100000, 0.0f);
  CHECK(pick(tr, 8000).empty());
}
