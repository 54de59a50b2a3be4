#include "godwit/search/fft_size_chooser.h"

#include <doctest/doctest.h>

#include <cmath>

using namespace godwit;

namespace {
// A synthetic cost table of L log2 L shape (what FFTs cost), so the choice
// can be checked by hand.
FftCostTable nlogn_table() {
  FftCostTable t;
  for (size_t s = 1024; s <= (size_t{1} << 22); s *= 2) {
    const double c = static_cast<double>(s) * std::log2(static_cast<double>(s)) * 1e-9;
    t[s] = {c, c, c * 0.1};
  }
  return t;
}
}  // namespace

TEST_CASE("the size chosen minimizes cost per output sample") {
  const auto t = nlogn_table();
  // For M = 240000 (30 s at 8 kHz), cost per output of L log L/(L - M + 1)
  // falls with L: the largest size wins when memory allows.
  auto s = choose_fft_sizes({240000}, t, size_t{1} << 22, size_t{1} << 30);
  CHECK(s[0] == (size_t{1} << 22));
  // Sizes never at or below the template length.
  s = choose_fft_sizes({4096}, t, size_t{1} << 14, size_t{1} << 30);
  CHECK(s[0] > 4096);
}

TEST_CASE("sizes shrink until the spectra fit the memory budget") {
  const auto t = nlogn_table();
  std::vector<size_t> lens(100, 240000);
  const size_t budget = size_t{400} << 20;
  auto s = choose_fft_sizes(lens, t, size_t{1} << 22, budget);
  size_t total = 0;
  for (size_t x : s) {
    total += spectrum_bytes(x);
    CHECK(x > 240000);
  }
  CHECK(total <= budget);
}

TEST_CASE("cost tables round-trip through JSON, garbage gives an empty table") {
  FftCostTable t{{4096, {1e-5, 2e-5, 1e-6}}};
  auto back = cost_table_from_json(cost_table_to_json(t));
  REQUIRE(back.count(4096) == 1);
  CHECK(back[4096].inverse_s == doctest::Approx(2e-5));
  CHECK(cost_table_from_json("{not json").empty());
}
