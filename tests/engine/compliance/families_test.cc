#include "godwit/compliance/families.h"

#include <doctest/doctest.h>

#include "synth.h"

using namespace godwit;

TEST_CASE("siblings sharing their audio but a tag are found, with the tag as distinguishing segments") {
  const double rate = 8000;
  Samples a = synth::spot(10.0, rate, 1), b = a;
  const Samples tag_a = synth::voice(2.0, rate, 50), tag_b = synth::voice(2.0, rate, 51);
  for (size_t i = 0; i < tag_a.size(); ++i) {
    a[8 * 8000 + i] = tag_a[i];
    b[8 * 8000 + i] = tag_b[i];
  }
  const Samples other = synth::spot(10.0, rate, 2);
  const Families f = find_families({"a", "b", "c"}, {a, b, other}, rate, {});
  CHECK(f.siblings(0, 1));
  CHECK(!f.siblings(0, 2));
  const auto d = f.distinguishing(0, {1});
  REQUIRE(d.size() == 10);
  for (size_t s = 0; s < 8; ++s) CHECK(!d[s]);
  CHECK(d[8]);
  CHECK(d[9]);
}

TEST_CASE("metadata can declare a family that the audio does not show") {
  const Samples a = synth::spot(5.0, 8000, 3), b = synth::spot(5.0, 8000, 4);
  const Families f = find_families({"a", "b"}, {a, b}, 8000, {{0, "fam"}, {1, "fam"}});
  CHECK(f.siblings(0, 1));
  CHECK(f.family_name[f.family_of[0]] == "fam");
}
