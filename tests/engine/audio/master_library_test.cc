// The master library: the samples each stage used to decode on its own,
// now decoded once per job; and a reconcile job and a locate job that
// decode each master once (opens counted at the opener).
#include "godwit/audio/master_library.h"

#include <doctest/doctest.h>

#include <cmath>
#include <map>

#include "godwit/audio/analysis_stream.h"
#include "godwit/audio/resampler.h"
#include "godwit/compliance/reconcile_job.h"
#include "godwit/compliance/timeline_locate.h"
#include "synth.h"
#include "test_util.h"

using namespace godwit;

namespace {

constexpr double kMasterRate = 16000;

Samples spot(double dur_s, uint64_t seed, uint64_t tag_seed) {
  Samples full = synth::music(dur_s, kMasterRate, seed);
  synth::set_rms(full, 0.07);
  synth::mix_into(full, synth::voice(dur_s - 5, kMasterRate, seed + 1), 0, 1.0);
  synth::mix_into(full, synth::voice(4.5, kMasterRate, tag_seed), static_cast<size_t>((dur_s - 4.8) * kMasterRate), 1.0);
  synth::set_rms(full, 0.1);
  return full;
}

void plant(Samples& into, double rate, const Samples& master, double at_s, double speed = 1) {
  // Played `speed` times faster: resampled as if its rate were master * speed.
  const Samples clip = resample_all(master, kMasterRate * speed, rate);
  const auto at = static_cast<size_t>(std::llround(at_s * rate));
  for (size_t i = 0; i < clip.size() && at + i < into.size(); ++i) into[at + i] = 0.8f * clip[i];
}

// An opener that counts the opens of each path.
SourceOpener counting(SourceOpener base, std::map<std::string, int>& opens) {
  return [base, &opens](const std::string& path, ChannelChoice c) {
    ++opens[path];
    return base(path, c);
  };
}

}  // namespace

TEST_CASE("a master library gives exactly the samples decode_all gives, decoding once") {
  test::MemoryFiles files;
  files.files["lib/a.wav"] = {spot(12, 1, 9), kMasterRate};
  std::map<std::string, int> opens;
  const SourceOpener opener = counting(files.opener(), opens);
  auto direct = [&](double rate) { return decode_all(*files.opener()("lib/a.wav", {}).value(), rate).value(); };
  MasterLibrary lib(opener, 8000);
  // Native, analysis rate, and a rate that is neither (a recording's rate
  // over a speed): the reference is decode_all over a fresh open.
  for (double rate : {kMasterRate, 8000.0, 44100 / 1.03, 8000.0, kMasterRate}) {
    auto s = lib.samples("lib/a.wav", rate);
    REQUIRE(s.ok());
    CHECK(*s.value() == direct(rate));
  }
  CHECK(lib.native_rate_hz("lib/a.wav").value() == kMasterRate);
  CHECK(opens["lib/a.wav"] == 1);
  CHECK(lib.decodes("lib/a.wav") == 1);
  CHECK(lib.stats().decodes == 1);

  // Keeping nothing: each request decodes, as each stage did.
  MasterLibrary none(opener, 8000, 0);
  for (int i = 0; i < 3; ++i) REQUIRE(none.analysis("lib/a.wav").ok());
  CHECK(none.decodes("lib/a.wav") == 3);

  // A budget for one master: the least recently used is dropped, and
  // decoded again when asked for.
  files.files["lib/b.wav"] = {spot(12, 3, 8), kMasterRate};
  MasterLibrary one(opener, kMasterRate, 12 * 16000 * sizeof(float));
  REQUIRE(one.samples("lib/a.wav", 0).ok());
  REQUIRE(one.samples("lib/b.wav", 0).ok());
  REQUIRE(one.samples("lib/a.wav", 0).ok());
  CHECK(one.decodes("lib/a.wav") == 2);
  CHECK(one.decodes("lib/b.wav") == 1);

  // A master that cannot be read: its error, every time (not kept).
  auto missing = lib.analysis("lib/none.wav");
  REQUIRE_FALSE(missing.ok());
  CHECK(missing.error().code == ErrorCode::not_found);
  CHECK_FALSE(lib.analysis("lib/none.wav").ok());
}

TEST_CASE("a reconcile job and a locate job decode each master once") {
  // Two siblings (one tag apart) and an unrelated master; airings of each,
  // one of them 3 % fast (the speed search's refinement), in two
  // consecutive files at another rate than the masters: every stage that
  // reads masters runs (bank, speed refinement, native refinement,
  // families, verification, loudness).
  test::MemoryFiles files;
  const Samples a = spot(20, 1, 101), b = spot(20, 1, 102), c = spot(15, 7, 103);
  files.files["lib/alpha.wav"] = {a, kMasterRate};
  files.files["lib/alpha_tag2.wav"] = {b, kMasterRate};
  files.files["lib/other.wav"] = {c, kMasterRate};
  const double rate = 22050;
  Samples f1 = synth::programme(90, rate, 5), f2 = synth::programme(90, rate, 6);
  plant(f1, rate, a, 10);
  plant(f1, rate, c, 50);
  plant(f2, rate, b, 20);
  plant(f2, rate, c, 55, 1.03);
  files.files["air/st-20260301T060000.wav"] = {f1, rate};
  files.files["air/st-20260301T060130.wav"] = {f2, rate};
  const std::vector<std::string> masters{"lib/alpha.wav", "lib/alpha_tag2.wav", "lib/other.wav"};

  std::map<std::string, int> opens;
  ReconcileJob job;
  job.masters = masters;
  job.recordings = {{"air/st-20260301T060000.wav", std::nullopt}, {"air/st-20260301T060130.wav", std::nullopt}};
  job.log = parse_planned_log("slot,spot,planned\nS1,alpha,2026-03-01T06:00:10\nS2,alpha_tag2,2026-03-01T06:01:50\n"
                              "S3,other,2026-03-01T06:00:50\n",
                              60)
                .value();
  ReconcileOptions ro;
  ro.locate = test::fast_locate_options(files);
  ro.locate.opener = counting(files.opener(), opens);
  auto r = run_reconcile(job, ro);
  REQUIRE(r.ok());
  // The job did its work: every placement aired, the fast airing found at its speed.
  REQUIRE(r.value().verdicts.size() == 3);
  for (const auto& v : r.value().verdicts) CHECK(v.status == VerdictStatus::aired);
  bool fast = false;
  for (const auto& air : r.value().airings) fast = fast || std::fabs(air.speed - 1.03) < 0.002;
  CHECK(fast);
  REQUIRE(r.value().families.size() == 1);
  for (const auto& m : masters) CHECK_MESSAGE(opens[m] == 1, m << " opened " << opens[m] << " times");

  // The same through run_locate_job, with the library given: its counts.
  opens.clear();
  LocateOptions lo = test::fast_locate_options(files);
  lo.opener = counting(files.opener(), opens);
  lo.masters = std::make_shared<MasterLibrary>(lo.opener, lo.analysis_rate_hz);
  auto l = run_locate_job({masters, {"air/st-20260301T060000.wav", "air/st-20260301T060130.wav"}}, lo);
  REQUIRE(l.ok());
  CHECK(l.value().matches.size() == 4);
  for (const auto& m : masters) {
    CHECK_MESSAGE(opens[m] == 1, m << " opened " << opens[m] << " times");
    CHECK(lo.masters->decodes(m) == 1);
  }
}
