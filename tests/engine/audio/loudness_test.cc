// Loudness against published values: EBU Tech 3341 (minimum requirements
// test signals for EBU R128 meters), cases 1 and 2: a stereo 1 kHz sine at
// -23 dBFS (and -33 dBFS) in each channel reads -23.0 (-33.0) LUFS within
// +/-0.1 LU. Values and tolerance from memory of EBU Tech 3341.
// "-23 dBFS" there is the sine's peak level (full-scale sine = 0 dBFS).
#include "godwit/audio/loudness.h"

#include <doctest/doctest.h>

#include <cmath>
#include <numbers>

#include "godwit/audio/memory_source.h"

using namespace godwit;

namespace {
Samples stereo_sine(double dbfs, double seconds, double rate) {
  const double amp = std::pow(10.0, dbfs / 20);
  Samples x(static_cast<size_t>(seconds * rate) * 2);
  for (size_t i = 0; i < x.size() / 2; ++i) {
    const float v = static_cast<float>(amp * std::sin(2 * std::numbers::pi * 1000.0 * static_cast<double>(i) / rate));
    x[2 * i] = x[2 * i + 1] = v;
  }
  return x;
}
}  // namespace

TEST_CASE("EBU Tech 3341 cases 1 and 2: 1 kHz stereo sine at -23 and -33 dBFS") {
  for (double rate : {44100.0, 48000.0}) {
    CAPTURE(rate);
    const Samples a = stereo_sine(-23, 20, rate);
    auto la = integrated_lufs(a.data(), a.size() / 2, 2, rate);
    REQUIRE(la.has_value());
    CHECK(std::fabs(*la + 23.0) <= 0.1);
    const Samples b = stereo_sine(-33, 20, rate);
    auto lb = integrated_lufs(b.data(), b.size() / 2, 2, rate);
    REQUIRE(lb.has_value());
    CHECK(std::fabs(*lb + 33.0) <= 0.1);
  }
}

TEST_CASE("a span of a source reads all its channels, silence has no loudness") {
  Samples x = stereo_sine(-23, 30, 48000);
  for (size_t i = 0; i < 10 * 48000 * 2; ++i) x[i] = 0.0f;  // first 10 s silent
  MemorySource src("mem", x, 2, 48000);
  auto l = measure_span_lufs(src, 10 * 48000, 20 * 48000);
  REQUIRE(l.ok());
  REQUIRE(l.value().has_value());
  CHECK(std::fabs(*l.value() + 23.0) <= 0.1);
  auto quiet = measure_span_lufs(src, 0, 10 * 48000);
  REQUIRE(quiet.ok());
  CHECK(!quiet.value().has_value());
}
