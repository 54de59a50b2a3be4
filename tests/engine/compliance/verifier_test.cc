#include "godwit/compliance/verifier.h"

#include <doctest/doctest.h>

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
