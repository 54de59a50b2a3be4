#include "search/window_energy.h"

#include <doctest/doctest.h>

#include "test_util.h"

using namespace godwit;

TEST_CASE("window energy about the window mean equals the direct sum, block mean removed") {
  std::vector<float> x{3.f, 4.f, 5.f, 1.f, 0.f, 2.f, 9.f, 9.f};
  const std::vector<float> orig = x;
  x.resize(10, 7.f);
  detail::WindowEnergy we;
  we.assign(x.data(), 8, 10);
  CHECK(x[8] == 0.f);  // padding zeroed
  for (size_t k = 0; k + 3 <= 8; ++k) {
    double m = (orig[k] + orig[k + 1] + orig[k + 2]) / 3.0, e = 0;
    for (size_t i = k; i < k + 3; ++i) e += (orig[i] - m) * (orig[i] - m);
    CHECK(we.energy(k, 3) == doctest::Approx(e).epsilon(1e-9));
  }
}
