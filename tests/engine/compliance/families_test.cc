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

TEST_CASE("screening at a low rate finds the same families as scoring every pair exactly") {
  // A library like a station's: independent spots of 20-30 s, and
  // families of two and three versions sharing their body and differing in
  // a closing tag of 3-5 s, some versions shorter (a cut-down edit), one
  // family declared by metadata only.
  const double rate = 8000;
  std::vector<std::string> ids;
  std::vector<Samples> masters;
  for (uint64_t k = 0; k < 8; ++k) {
    ids.push_back("solo-" + std::to_string(k));
    masters.push_back(synth::spot(20.0 + static_cast<double>(k), rate, 100 + k));
  }
  for (uint64_t fam = 0; fam < 3; ++fam) {
    const Samples body = synth::spot(25.0, rate, 200 + fam);
    for (uint64_t v = 0; v < 2 + fam % 2; ++v) {
      Samples m = body;
      if (v == 2) m.resize(static_cast<size_t>(15.0 * rate));  // a cut-down edit
      const Samples tag = synth::voice(3.0 + static_cast<double>(v), rate, 300 + 10 * fam + v);
      m.insert(m.end(), tag.begin(), tag.end());
      ids.push_back("family-" + std::to_string(fam) + "-v" + std::to_string(v));
      masters.push_back(std::move(m));
    }
  }
  const std::map<size_t, std::string> declared{{0, "declared"}, {1, "declared"}};
  FamilyOptions exact;
  exact.screen_rate_hz = 0;
  const Families a = find_families(ids, masters, rate, declared, exact);
  const Families b = find_families(ids, masters, rate, declared, FamilyOptions{});
  REQUIRE(a.family_of.size() == masters.size());
  CHECK(a.family_of == b.family_of);
  CHECK(a.family_name == b.family_name);
  REQUIRE(a.links.size() == b.links.size());
  for (size_t k = 0; k < a.links.size(); ++k) {
    CHECK(a.links[k].a == b.links[k].a);
    CHECK(a.links[k].b == b.links[k].b);
    CHECK(a.links[k].score == b.links[k].score);
    CHECK(a.links[k].distinct_a == b.links[k].distinct_a);
  }
  // What the library holds: 3 families found by their audio (7 versions),
  // the declared pair, and the rest alone.
  CHECK(a.siblings(0, 1));
  for (size_t i = 8; i < masters.size(); ++i)
    for (size_t j = 8; j < masters.size(); ++j)
      if (i != j) CHECK(a.siblings(i, j) == (ids[i].substr(0, 8) == ids[j].substr(0, 8)));
  for (size_t i = 2; i < 8; ++i)
    for (size_t j = 0; j < masters.size(); ++j) CHECK_FALSE(a.siblings(i, j));
}
