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

TEST_CASE("families: the one-bank screen finds siblings whose shared audio lies at any lag, among many masters") {
  // Versions of one body B (20 s) that place it differently: a tag before
  // it, a tag after it, a cut-down edit, and its second part with a long
  // tag after it. Shorter against longer, the best alignment then has the
  // shorter sticking out before the longer's start (tag before vs tag
  // after) or past its end (B's second part against the others), which the
  // screen must score as the exact pass does. Solo spots of other lengths
  // sit between them in the library, so each version's region in the
  // screen's stream is far from its siblings'. Expected families: as built
  // (common practice: a tag or a cut does not make a different spot).
  const double rate = 8000;
  const auto sec = [&](double s) { return static_cast<size_t>(s * rate); };
  const Samples body = synth::spot(20.0, rate, 700);
  const auto cat = [](Samples x, const Samples& y) {
    x.insert(x.end(), y.begin(), y.end());
    return x;
  };
  const auto part = [&](const Samples& x, double from_s, double to_s) {
    return Samples(x.begin() + static_cast<std::ptrdiff_t>(sec(from_s)), x.begin() + static_cast<std::ptrdiff_t>(sec(to_s)));
  };
  std::vector<std::string> ids;
  std::vector<Samples> masters;
  std::vector<int> built;  // per master: family as built, -1 alone
  const auto add = [&](const std::string& id, Samples m, int fam) {
    ids.push_back(id);
    masters.push_back(std::move(m));
    built.push_back(fam);
  };
  uint64_t seed = 710;
  const auto solo = [&](double s) { add("solo-" + std::to_string(seed), synth::spot(s, rate, seed), -1); ++seed; };
  solo(31.0);
  add("tag-before", cat(synth::voice(3.0, rate, 801), body), 0);                  // 23 s
  solo(17.0);
  solo(26.0);
  add("tag-after", cat(body, synth::voice(5.0, rate, 802)), 0);                   // 25 s
  solo(35.0);
  add("cut-down", cat(part(body, 0, 12), synth::voice(2.0, rate, 803)), 0);       // 14 s
  solo(22.0);
  solo(15.0);
  add("second-half", cat(part(body, 6, 20), synth::voice(6.0, rate, 804)), 0);    // 20 s
  solo(28.0);
  // A second family, its versions far apart: the same jingle at the end
  // of one and at the start of the other (the shorter sticks out past the
  // longer's end).
  const Samples jingle = synth::music(12.0, rate, 900);
  add("jingle-late", cat(synth::voice(14.0, rate, 901), jingle), 1);              // 26 s
  solo(19.0);
  solo(33.0);
  add("jingle-early", cat(jingle, synth::voice(4.0, rate, 902)), 1);              // 16 s

  FamilyOptions exact;
  exact.screen_rate_hz = 0;
  const Families a = find_families(ids, masters, rate, {}, exact);
  const Families b = find_families(ids, masters, rate, {}, FamilyOptions{});
  // The same families, links, scores and segments (the exact pass scores
  // each link; a pair the screen lost would be a link missing here).
  REQUIRE(a.family_of.size() == masters.size());
  CHECK(a.family_of == b.family_of);
  REQUIRE(a.links.size() == b.links.size());
  for (size_t k = 0; k < a.links.size(); ++k) {
    CHECK(a.links[k].a == b.links[k].a);
    CHECK(a.links[k].b == b.links[k].b);
    CHECK(a.links[k].score == b.links[k].score);
    CHECK(a.links[k].lag_s == b.links[k].lag_s);
    CHECK(a.links[k].distinct_a == b.links[k].distinct_a);
    CHECK(a.links[k].distinct_b == b.links[k].distinct_b);
  }
  // The pairs aligned with the shorter sticking out are linked directly,
  // not only through a third version.
  const auto linked = [&](size_t i, size_t j) {
    for (const auto& l : b.links)
      if (l.a == i && l.b == j) return true;
    return false;
  };
  CHECK(linked(1, 4));    // tag-before over tag-after: sticks out before its start
  CHECK(linked(1, 9));    // second-half over tag-before: past its end
  CHECK(linked(11, 14));  // jingle-early over jingle-late: past its end
  for (size_t i = 0; i < masters.size(); ++i)
    for (size_t j = 0; j < masters.size(); ++j)
      if (i != j) CHECK(b.siblings(i, j) == (built[i] >= 0 && built[i] == built[j]));
}
