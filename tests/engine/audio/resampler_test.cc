#include "godwit/audio/resampler.h"

#include <doctest/doctest.h>

#include <cmath>
#include <numbers>

using namespace godwit;

// Reference: the analytic signal. A 440 Hz sine sampled at 44.1 kHz and
// resampled to 8 kHz must equal sin(2 pi 440 j / 8000) at output sample j:
// any delay the filter left in would show as a phase error.
TEST_CASE("streaming resampling is time-aligned and equals the analytic signal") {
  const double in_rate = 44100, out_rate = 8000, f = 440;
  Samples in(static_cast<size_t>(in_rate * 2));
  for (size_t i = 0; i < in.size(); ++i) in[i] = static_cast<float>(0.5 * std::sin(2 * std::numbers::pi * f * static_cast<double>(i) / in_rate));
  Resampler r(in_rate, out_rate);
  Samples out;
  for (size_t i = 0; i < in.size(); i += 1000) r.process(in.data() + i, std::min<size_t>(1000, in.size() - i), out);
  r.flush(out);
  CHECK(std::fabs(static_cast<double>(out.size()) - 2 * out_rate) <= 1);
  double err = 0;
  for (size_t j = 2000; j < 14000; ++j)
    err = std::max(err, std::fabs(out[j] - 0.5 * std::sin(2 * std::numbers::pi * f * static_cast<double>(j) / out_rate)));
  CHECK(err < 1e-3);
  // One-shot equals streamed.
  const Samples once = resample_all(in, in_rate, out_rate);
  REQUIRE(once.size() == out.size());
  for (size_t j = 0; j < out.size(); j += 97) CHECK(once[j] == doctest::Approx(out[j]).epsilon(1e-5));
}

TEST_CASE("equal rates pass samples through") {
  Resampler r(8000, 8000);
  Samples in{0.1f, 0.2f, -0.3f}, out;
  r.process(in.data(), in.size(), out);
  r.flush(out);
  CHECK(out == in);
}
