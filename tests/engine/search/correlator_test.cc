#include "godwit/search/correlator.h"

#include <doctest/doctest.h>

#include <algorithm>
#include <cmath>

#include "synth.h"
#include "test_util.h"

using namespace godwit;

namespace {

size_t argmax_abs(const Samples& x) {
  size_t b = 0;
  for (size_t i = 1; i < x.size(); ++i)
    if (std::fabs(x[i]) > std::fabs(x[b])) b = i;
  return b;
}

}  // namespace

TEST_CASE("a planted clip scores 1 at its offset, whatever its gain and polarity") {
  Samples x = synth::programme(20.0, 8000, 1);
  const Samples t = synth::spot(2.0, 8000, 2);
  for (double gain : {1.0, 0.01, -0.5}) {
    CAPTURE(gain);
    Samples y = x;
    for (size_t i = 0; i < t.size(); ++i) y[50000 + i] = static_cast<float>(gain * t[i]);
    auto bank = test::make_bank({t}, 65536);
    const Samples tr = score_trace(bank, 0, y);
    const size_t k = argmax_abs(tr);
    CHECK(k == 50000);
    CHECK(std::fabs(tr[k]) == doctest::Approx(1.0).epsilon(1e-4));
    CHECK((tr[k] > 0) == (gain > 0));
  }
}

TEST_CASE("shift in, shift out, scores never leave [-1, 1] and are never NaN") {
  const Samples t = synth::spot(1.0, 8000, 3);
  auto bank = test::make_bank({t}, 16384);
  Samples x = synth::programme(8.0, 8000, 4);
  for (size_t off : {0ul, 1ul, 16384ul - 8000ul, 16385ul - 8000ul, 30000ul, x.size() - t.size()}) {
    CAPTURE(off);
    Samples y = x;
    for (size_t i = 0; i < t.size(); ++i) y[off + i] = t[i];
    const Samples tr = score_trace(bank, 0, y, {}, 1000);
    CHECK(argmax_abs(tr) == off);
    for (float v : tr) {
      REQUIRE(!std::isnan(v));
      REQUIRE(std::fabs(v) <= 1.0f + 1e-5f);
    }
  }
}

TEST_CASE("streaming equals one-shot: any push size gives the same trace") {
  const Samples t = synth::spot(1.0, 8000, 5);
  Samples x = synth::programme(10.0, 8000, 6);
  auto bank = test::make_bank({t}, 16384);
  const Samples a = score_trace(bank, 0, x, {}, x.size());
  for (size_t push : {1ul, 333ul, 8192ul, 16384ul}) {
    const Samples b = score_trace(bank, 0, x, {}, push);
    REQUIRE(a.size() == b.size());
    CHECK(a == b);  // bitwise: blocks do not depend on how samples arrive
  }
}

TEST_CASE("results are identical whatever the thread count") {
  std::vector<Samples> ts;
  for (uint64_t s = 0; s < 5; ++s) ts.push_back(synth::spot(0.8 + 0.1 * static_cast<double>(s), 8000, 10 + s));
  auto bank = test::make_bank(ts, 16384);
  Samples x = synth::programme(10.0, 8000, 7);
  for (size_t t = 0; t < ts.size(); ++t) {
    CorrelatorOptions one, two, four;
    one.threads = 1;
    two.threads = 2;
    four.threads = 4;
    const Samples a = score_trace(bank, t, x, one), b = score_trace(bank, t, x, two), c = score_trace(bank, t, x, four);
    CHECK(a == b);
    CHECK(a == c);
  }
}

TEST_CASE("digital silence, near-silence and quiet windows next to loud ones get no score") {
  const Samples t = synth::spot(1.0, 8000, 8);
  auto bank = test::make_bank({t}, 32768);
  Samples x(80000, 0.0f);
  // Near silence: dither at -90 dBFS.
  Samples dither = synth::white_noise(20000, 3e-5, 1);
  std::copy(dither.begin(), dither.end(), x.begin() + 20000);
  // A loud burst next to a -80 dB copy of the template (below the floor).
  Samples loud = synth::programme(2.0, 8000, 9);
  std::copy(loud.begin(), loud.end(), x.begin() + 45000);
  for (size_t i = 0; i < t.size(); ++i) x[62000 + i] = 1e-4f * t[i];
  const Samples tr = score_trace(bank, 0, x);
  for (size_t k = 0; k < 20000 - t.size(); ++k) REQUIRE(tr[k] == 0.0f);  // digital silence
  for (size_t k = 20000; k + t.size() <= 40000; ++k) REQUIRE(tr[k] == 0.0f);  // dither
  CHECK(tr[62000] == 0.0f);  // the -80 dB copy: no score rather than a false 1.0
}

TEST_CASE("DC offset, clipping and an isolated spike do not create high scores") {
  const Samples t = synth::spot(1.5, 8000, 11);
  auto bank = test::make_bank({t}, 32768);
  Samples x = synth::programme(10.0, 8000, 12);
  for (size_t i = 20000; i < 40000; ++i) x[i] += 0.4f;                                   // DC step
  for (auto& v : x) v = std::clamp(v * 4.0f, -1.0f, 1.0f);                               // hard clipping
  x[60000] = 1.0f;                                                                        // a spike
  for (size_t i = 70000; i < 72000; ++i) x[i] = 0;                                        // a dropout
  const Samples tr = score_trace(bank, 0, x);
  for (float v : tr) REQUIRE(std::fabs(v) < 0.3f);
  // A spike alone in silence.
  Samples s(40000, 0.0f);
  s[20000] = 1.0f;
  const Samples ts = score_trace(bank, 0, s);
  for (float v : ts) REQUIRE(std::fabs(v) < 0.3f);
}

TEST_CASE("templates of different lengths get their own FFT sizes and all find their clips") {
  std::vector<Samples> ts{synth::spot(0.6, 8000, 20), synth::spot(3.0, 8000, 21)};
  std::vector<TemplateInput> in;
  for (size_t i = 0; i < ts.size(); ++i) {
    std::string id = "t";  // appended: `"t" + std::string&&` trips GCC 12's -Wrestrict (PR 105329)
    id += std::to_string(i);
    in.push_back({id, "", 8000, ts[i]});
  }
  BankOptions o;
  o.max_fft_size = 1 << 16;
  auto bank = TemplateBank::build(in, o);
  REQUIRE(bank.ok());
  CHECK(bank.value()->at(0).fft_size > 4800);
  CHECK(bank.value()->at(1).fft_size > 24000);
  Samples x = synth::programme(12.0, 8000, 22);
  for (size_t i = 0; i < ts[0].size(); ++i) x[10000 + i] = ts[0][i];
  for (size_t i = 0; i < ts[1].size(); ++i) x[50000 + i] = ts[1][i];
  CHECK(argmax_abs(score_trace(bank.value(), 0, x)) == 10000);
  CHECK(argmax_abs(score_trace(bank.value(), 1, x)) == 50000);
}

TEST_CASE("silent or too-short masters are refused") {
  std::vector<TemplateInput> in{{"quiet", "q.wav", 8000, Samples(8000, 0.0f)}};
  auto r = TemplateBank::build(in, {});
  REQUIRE(!r.ok());
  CHECK(r.error().code == ErrorCode::invalid_template);
  CHECK(r.error().path == "q.wav");
}
