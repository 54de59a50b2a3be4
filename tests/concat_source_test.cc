#include "godwit/concat_source.h"

#include <doctest/doctest.h>

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
  auto [part, frame] = c.value()->locate(150.5);
  CHECK(part == 1);
  CHECK(frame == doctest::Approx(70.5));
  REQUIRE(c.value()->seek(95).ok());
  Samples s(10);
  size_t n = 0;
  while (n < 10) n += c.value()->read(s.data() + n, 10 - n).value();
  CHECK(s[4] == 99.0f);
  CHECK(s[5] == 1020.0f);
}
