#include "godwit/audio/concat_source.h"

#include <doctest/doctest.h>

#include <algorithm>
#include <cmath>

#include "test_util.h"

using namespace godwit;

TEST_CASE("files read as one stream, skipping overlaps, and map back to file positions") {
  test::MemoryFiles files;
  Samples a(100), b(100);
  for (size_t i = 0; i < 100; ++i) a[i] = static_cast<float>(i), b[i] = static_cast<float>(1000 + i);
  files.files["a"] = {a, 10};
  files.files["b"] = {b, 10};
  auto c = ConcatSource::open("run", {{"a", 100, 0}, {"b", 100, 20}}, files.opener(), {});
  REQUIRE(c.ok());
  Samples out(300);
  size_t got = 0;
  for (;;) {
    auto r = c.value()->read(out.data() + got, 37);
    REQUIRE(r.ok());
    if (r.value() == 0) break;
    got += r.value();
  }
  REQUIRE(got == 180);
  CHECK(out[99] == 99.0f);
  CHECK(out[100] == 1020.0f);
  auto [part, in_file_s] = c.value()->locate_s(150.5);
  CHECK(part == 1);
  CHECK(in_file_s == doctest::Approx(7.05));  // 70.5 frames at 10 Hz
  REQUIRE(c.value()->seek(95).ok());
  Samples s(10);
  size_t n = 0;
  while (n < 10) n += c.value()->read(s.data() + n, 10 - n).value();
  CHECK(s[4] == 99.0f);
  CHECK(s[5] == 1020.0f);
}

TEST_CASE("a run of files at different rates reads as one stream at the first file's rate") {
  // A 440 Hz sine that carries on, phase-continuous, from an 8 kHz file into
  // an 11.025 kHz file: read at 8 kHz, the whole stream is the sine (the
  // sampling theorem; libsoxr's pass band reaches well past 440 Hz).
  constexpr double kPi = 3.14159265358979323846, f = 440;
  test::MemoryFiles files;
  Samples a(8000), b(11025);
  for (size_t i = 0; i < a.size(); ++i) a[i] = static_cast<float>(0.5 * std::sin(2 * kPi * f * static_cast<double>(i) / 8000));
  for (size_t i = 0; i < b.size(); ++i)
    b[i] = static_cast<float>(0.5 * std::sin(2 * kPi * f * (1.0 + static_cast<double>(i) / 11025)));
  files.files["a"] = {a, 8000};
  files.files["b"] = {b, 11025};
  auto c = ConcatSource::open("run", {{"a", 8000, 0, 8000}, {"b", 11025, 0, 11025}}, files.opener(), {});
  REQUIRE(c.ok());
  CHECK(c.value()->info().native_rate_hz == 8000);
  REQUIRE(c.value()->info().native_frames == 16000);
  Samples out(16000);
  size_t got = 0;
  for (;;) {
    auto r = c.value()->read(out.data() + got, std::min<size_t>(1000, out.size() - got));
    REQUIRE(r.ok());
    if (r.value() == 0 || got + r.value() >= out.size()) {
      got += r.value();
      break;
    }
    got += r.value();
  }
  CHECK(got >= 15990);
  double err = 0;
  for (size_t i = 8200; i < 15800; ++i)  // away from the filter's start-up and end
    err = std::max(err, std::fabs(out[i] - 0.5 * std::sin(2 * kPi * f * static_cast<double>(i) / 8000)));
  CHECK(err < 2e-3);
  auto [part, in_file_s] = c.value()->locate_s(12000);
  CHECK(part == 1);
  CHECK(in_file_s == doctest::Approx(0.5));
  CHECK(c.value()->part_rate_at(12000) == 11025);
  // Seeking into the resampled file lands on the same time.
  REQUIRE(c.value()->seek(12000).ok());
  Samples s(400);
  size_t n = 0;
  while (n < s.size()) n += c.value()->read(s.data() + n, s.size() - n).value();
  double serr = 0;
  for (size_t i = 100; i < 400; ++i)
    serr = std::max(serr, std::fabs(s[i] - 0.5 * std::sin(2 * kPi * f * static_cast<double>(12000 + i) / 8000)));
  CHECK(serr < 5e-3);
}
