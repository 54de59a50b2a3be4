// The coarse step of the speed search against a direct computation of the
// same multi-band normalized correlation, in double precision.
#include "speed/warp_correlator.h"

#include <doctest/doctest.h>

#include <cmath>

#include "synth.h"

using namespace godwit;
using namespace godwit::detail;

namespace {

// Direct multi-band Pearson of envelope `t` (m frames) against `x` at lag k.
double direct(const std::vector<float>& t, size_t m, const std::vector<float>& x, size_t k, size_t bands) {
  double dot = 0, e = 0, norm = 0;
  for (size_t b = 0; b < bands; ++b) {
    double mt = 0, mx = 0;
    for (size_t j = 0; j < m; ++j) mt += t[j * bands + b], mx += x[(k + j) * bands + b];
    mt /= static_cast<double>(m);
    mx /= static_cast<double>(m);
    for (size_t j = 0; j < m; ++j) {
      const double a = t[j * bands + b] - mt, c = x[(k + j) * bands + b] - mx;
      dot += a * c, e += c * c, norm += a * a;
    }
  }
  return dot / std::sqrt(e * norm);
}

}  // namespace

TEST_CASE("at speed 1 the warp correlator equals the direct multi-band correlation of the envelopes") {
  const double rate = 8000;
  const Samples rec = synth::programme(240, rate, 5);
  const Samples tmpl = synth::spot(12, rate, 6);
  FftPlans plans(Planner::estimate);
  EnvelopeBands bands;
  size_t m = 0, n = 0;
  const auto te = envelope_of(plans, tmpl, rate, 1024, 400, 400, bands, m);
  // The recording's envelope read as the correlator reads it: frames every
  // 200 samples, values every 400 (exactly on frames, no interpolation).
  const auto xe = envelope_of(plans, rec, rate, 1024, 200, 400, bands, n);
  WarpOptions o;
  o.speeds = {1.0};
  WarpCorrelator wc({WarpTemplate{te, m, {0}}}, o);
  std::vector<float> got;
  WarpSink sink = [&](size_t, size_t, int64_t first, const float* s, size_t k) {
    REQUIRE(static_cast<size_t>(first) == got.size());
    got.insert(got.end(), s, s + k);
  };
  for (size_t i = 0; i < rec.size(); i += 3000) wc.push(rec.data() + i, std::min<size_t>(3000, rec.size() - i), sink);
  wc.finish(sink);
  REQUIRE(n >= m);
  CHECK(got.size() + 2 >= n - m + 1);  // every lag the stream covers, give or take its last frames
  double worst = 0;
  for (size_t k = 0; k < std::min(got.size(), n - m + 1); ++k) worst = std::max(worst, std::fabs(got[k] - direct(te, m, xe, k, bands.count)));
  CHECK(worst < 2e-3);
  CHECK(wc.offset_of(0, 10) == doctest::Approx(4000));
}
