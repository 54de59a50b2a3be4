#include "godwit/compliance/verifier.h"

#include <doctest/doctest.h>

#include <algorithm>

#include "synth.h"

using namespace godwit;

TEST_CASE("a complete airing covers 1, a cut-off one reports what is missing") {
  const Samples m = synth::spot(10.0, 8000, 1);
  auto full = verify_airing(m, m, 8000, 1);
  CHECK(full.coverage == doctest::Approx(1.0));
  CHECK(full.missing_s.empty());
  Samples cut = m;
  const Samples other = synth::programme(10.0, 8000, 2);
  for (size_t i = 6 * 8000; i < cut.size(); ++i) cut[i] = other[i];
  auto p = verify_airing(m, cut, 8000, 1);
  CHECK(p.coverage == doctest::Approx(0.6));
  REQUIRE(p.missing_s.size() == 1);
  CHECK(p.missing_s[0].first == doctest::Approx(6.0));
  CHECK(p.missing_s[0].second == doctest::Approx(10.0));
  // Recording ended 3 s in.
  auto end = verify_airing(m, Samples(m.begin(), m.begin() + 3 * 8000), 8000, 1);
  CHECK(end.coverage == doctest::Approx(0.3));
}

TEST_CASE("inverted polarity verifies with polarity -1, noise at 0 dB still covers") {
  const Samples m = synth::spot(8.0, 8000, 3);
  Samples inv(m.size());
  for (size_t i = 0; i < m.size(); ++i) inv[i] = -m[i];
  CHECK(verify_airing(m, inv, 8000, -1).coverage == doctest::Approx(1.0));
  CHECK(verify_airing(m, inv, 8000, 1).coverage == doctest::Approx(0.0));
  Samples noisy = m;
  const Samples n = synth::white_noise(m.size(), synth::rms(m), 4);
  for (size_t i = 0; i < m.size(); ++i) noisy[i] += n[i];
  CHECK(verify_airing(m, noisy, 8000, 1).coverage == doctest::Approx(1.0));
}

// A spot crossfaded into programme 12 dB louder than itself, as a segue
// at a quiet spot's edges does: the faded edges aired (the benchmark's
// truth counts them, and so does common practice); a cut at 60 % with the
// same fade into the programme still reads 0.6.
TEST_CASE("crossfaded edges into louder programme count as aired, a cut with a fade still reads as cut") {
  const double rate = 8000;
  const Samples m = synth::spot(10.0, rate, 5);
  const Samples programme = synth::programme(10.0, rate, 6);
  const double spot_gain = 0.25;  // -12 dB against the programme
  const double programme_gain = synth::rms(m) / synth::rms(programme);
  auto aired = [&](double until_s, double fade_in_s, double fade_out_s) {
    Samples x(m.size());
    const auto end = static_cast<size_t>(until_s * rate);
    for (size_t i = 0; i < m.size(); ++i) {
      const double t = static_cast<double>(i) / rate, left = until_s - t;
      double w = i < end ? 1.0 : 0.0;
      if (i < end && t < fade_in_s) w = std::min(w, t / fade_in_s);
      if (i < end && left < fade_out_s) w = std::min(w, left / fade_out_s);
      x[i] = static_cast<float>(spot_gain * m[i] * w + programme_gain * programme[i] * (1 - w));
    }
    const Samples n = synth::white_noise(x.size(), spot_gain * synth::rms(m) * 0.3, 7);  // 10 dB under the spot
    for (size_t i = 0; i < x.size(); ++i) x[i] += n[i];
    return x;
  };
  const auto whole = verify_airing(m, aired(10.0, 0.6, 1.5), rate, 1);
  CHECK(whole.coverage >= 0.97);
  const auto cut = verify_airing(m, aired(6.0, 0.0, 1.0), rate, 1);
  CHECK(cut.coverage == doctest::Approx(0.6).epsilon(0.05 / 0.6));
}

// A spot whose last seconds are quieter than the rest (a soft ending, a
// quiet tag), aired whole at a low SNR: in those seconds even a perfect
// airing scores under its level elsewhere, as sqrt(S / (S + N)) for a
// frame of signal power S in noise N (the correlation of a signal with
// itself plus independent noise; a textbook identity). Judged against the
// level its own loudness predicts there, it aired; cut at 60 %, it still
// reads 0.6. White noise from synth, several seeds.
TEST_CASE("a whole airing with a quiet ending at low SNR covers 1, cut at 60 % it still reads 0.6") {
  const double rate = 8000;
  for (uint64_t seed = 11; seed < 17; ++seed) {
    Samples m = synth::spot(12.0, rate, seed);
    for (size_t i = static_cast<size_t>(9.0 * rate); i < m.size(); ++i) m[i] *= 0.25f;  // the last 3 s 12 dB down
    auto aired = [&](double until_s) {
      Samples x(m.size());
      const Samples other = synth::programme(12.0, rate, seed + 100);
      const double other_gain = synth::rms(m) / synth::rms(other);
      for (size_t i = 0; i < m.size(); ++i)
        x[i] = static_cast<float>(static_cast<double>(i) / rate < until_s ? m[i] : other_gain * other[i]);
      const Samples n = synth::white_noise(x.size(), synth::rms(m) * 0.708, seed + 200);  // SNR 3 dB over the spot
      for (size_t i = 0; i < x.size(); ++i) x[i] += n[i];
      return x;
    };
    CAPTURE(seed);
    CHECK(verify_airing(m, aired(12.0), rate, 1).coverage >= 0.95);
    CHECK(verify_airing(m, aired(7.2), rate, 1).coverage == doctest::Approx(0.6).epsilon(0.05 / 0.6));
  }
}
