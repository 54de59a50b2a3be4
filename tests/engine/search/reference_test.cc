// Score traces against outside references: numpy (direct Pearson per
// window, float64) and OpenCV matchTemplate(TM_CCOEFF_NORMED), both from
// Debian's python3-numpy / python3-opencv, via tests/ref/pearson_reference.py.
#include "godwit/search/correlator.h"

#include <doctest/doctest.h>

#include <cmath>

#include "synth.h"
#include "test_util.h"

using namespace godwit;

namespace {

// Largest |a - b|; infinite when a value is not finite or the lengths
// differ, so a NaN in a trace fails the comparison instead of vanishing
// (std::max(d, NaN) keeps d).
double max_abs_diff(const Samples& a, const Samples& b) {
  if (a.size() != b.size()) return INFINITY;
  double d = 0;
  for (size_t i = 0; i < a.size(); ++i) {
    const double e = std::fabs(double(a[i]) - b[i]);
    if (!std::isfinite(e)) return INFINITY;
    d = std::max(d, e);
  }
  return d;
}

void check_against_references(const Samples& x, const Samples& t, size_t fft_size) {
  test::TempDir dir;
  test::write_f32(dir.file("x.f32"), x);
  test::write_f32(dir.file("t.f32"), t);
  REQUIRE(test::run_reference("pearson_reference.py", dir.file("x.f32") + " " + dir.file("t.f32") + " " +
                                                          dir.file("np.f32") + " " + dir.file("cv.f32")) == 0);
  const Samples np_trace = test::read_f32(dir.file("np.f32"));
  const Samples cv_trace = test::read_f32(dir.file("cv.f32"));
  auto bank = test::make_bank({t}, fft_size);
  // Odd push size so that blocks and pushes never line up.
  const Samples ours = score_trace(bank, 0, x, {}, 7777);
  REQUIRE(ours.size() == x.size() - t.size() + 1);
  REQUIRE(np_trace.size() == ours.size());
  REQUIRE(cv_trace.size() == ours.size());
  // Tolerance 1e-4 (issue 2): float FFT against float64 direct sums.
  CHECK(max_abs_diff(ours, np_trace) < 1e-4);
  CHECK(max_abs_diff(ours, cv_trace) < 1e-4);
}

}  // namespace

TEST_CASE("trace equals numpy Pearson and OpenCV TM_CCOEFF_NORMED on random signals") {
  synth::Rng rng(5);
  Samples x(60000), t(3000);
  for (auto& v : x) v = static_cast<float>(rng.gaussian() * 0.3 + 0.05);  // with a DC offset
  for (auto& v : t) v = static_cast<float>(rng.gaussian());
  // Plant the template (scaled) so that the trace also has a peak near 1.
  synth::mix_into(x, t, 12345, 0.5);
  check_against_references(x, t, 8192);
}

TEST_CASE("trace equals numpy and OpenCV on audio-like signals, several blocks") {
  Samples x = synth::programme(12.0, 8000, 77);
  Samples t = synth::spot(1.5, 8000, 3);
  synth::mix_into(x, t, 40000, 1.0);
  check_against_references(x, t, 16384);
}
