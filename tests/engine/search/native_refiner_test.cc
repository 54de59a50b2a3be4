#include "godwit/search/native_refiner.h"

#include <doctest/doctest.h>

#include <cmath>

#include "godwit/audio/resampler.h"
#include "synth.h"

using namespace godwit;

TEST_CASE("refinement finds the native offset of a clip, with polarity") {
  const Samples t = synth::spot(1.0, 48000, 1);
  Samples span = synth::programme(1.2, 48000, 2);
  for (size_t i = 0; i < t.size(); ++i) span[317 + i] = -0.5f * t[i];
  auto r = refine_offset(t, span, -1);
  REQUIRE(r.has_value());
  CHECK(r->offset_frames == doctest::Approx(317).epsilon(1e-3));
  CHECK(r->score == doctest::Approx(-1.0).epsilon(1e-4));
}

TEST_CASE("a fractional delay is recovered to a fraction of a native sample") {
  // Delay by 10.5 samples at 48 kHz: make the clip at 96 kHz, shift by 21,
  // resample both to 48 kHz.
  const Samples hi = synth::spot(1.0, 96000, 3);
  Samples shifted(hi.size() + 400, 0.0f);
  for (size_t i = 0; i < hi.size(); ++i) shifted[i + 21] = hi[i];
  const Samples t = resample_all(hi, 96000, 48000);
  const Samples span = resample_all(shifted, 96000, 48000);
  auto r = refine_offset(t, span, 1);
  REQUIRE(r.has_value());
  CHECK(std::fabs(r->offset_frames - 10.5) < 0.25);
}

TEST_CASE("no refinement on silence or at the span's edge") {
  const Samples t = synth::spot(0.5, 8000, 4);
  CHECK(!refine_offset(t, Samples(t.size() + 10, 0.0f), 1).has_value());
  Samples edge(t.size() + 10, 0.0f);
  for (size_t i = 0; i < t.size(); ++i) edge[i] = t[i];
  CHECK(!refine_offset(t, edge, 1).has_value());
}
