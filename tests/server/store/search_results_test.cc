// Search results kept and reused (stored_tasks.h, schema 3) with real
// SQLite files: the migration from schema 2, file digests by stat, and a
// StoredTaskRunner over a counting inner runner (no audio is read: the
// inner runner makes up its matches, the store's keys hash the files);
// families kept per masters and options (stored_families.h), over
// find_families of synthetic masters.
#include "stored_tasks.h"

#include <doctest/doctest.h>

#include <filesystem>
#include <fstream>
#include <random>

#include "stored_families.h"

#include "store_fixture.h"
#include "store_schema.h"
#include "test_util.h"

namespace godwit {
namespace {

using test::synthetic_day;
using test::TempDir;

std::unique_ptr<RecordStore> open_store(const TempDir& dir, int version = -1) {
  auto s = RecordStore::open_file(dir.file("store.sqlite"), true, version);
  REQUIRE_MESSAGE(s.ok(), (s.ok() ? "" : s.error().describe()));
  return std::move(s.value());
}

void write(const std::string& path, const std::string& bytes) { std::ofstream(path, std::ios::binary) << bytes; }

// Finds, for each master of a task, one airing 1 s into what the task owns
// (or reads), in stream time as a task reports it; counts what it searched.
class CountingRunner : public TaskRunner {
 public:
  size_t tasks_run = 0, masters_searched = 0;
  Result<std::vector<nlohmann::json>> run(const std::string&, const std::vector<PlannedTask>& tasks,
                                          const std::function<void(double)>&, const std::function<bool()>&,
                                          const std::function<void(std::string_view)>&) override {
    std::vector<nlohmann::json> out;
    for (const auto& t : tasks) {
      auto spec = std::get<SegmentSpec>(job_spec_from_json(t.spec).value());
      ++tasks_run;
      const Segment& s = spec.segment;
      const double at = (std::isfinite(s.own_from_s) ? s.own_from_s : s.read_from_s) + 1;
      nlohmann::json doc{{"analysis_rate_hz", 8000.0}, {"templates", nlohmann::json::array()},
                         {"matches", nlohmann::json::array()}, {"unconfirmed_detections", 0},
                         {"recordings", {{{"path", s.stream.name}, {"format", "WAV"}, {"duration_s", s.read_from_s + 10},
                                          {"native_rate_hz", 8000.0}, {"channels", 1}}}}};
      for (const auto& m : spec.templates) {
        ++masters_searched;
        doc["templates"].push_back({{"id", template_id_for(m)}, {"path", m}, {"duration_s", 20.0}, {"fft_size", 4096}});
        doc["matches"].push_back({{"template", template_id_for(m)}, {"recording", s.stream.name}, {"offset_s", at},
                                  {"score", 0.9}, {"polarity", 1}, {"speed", 1.0}, {"refined", true}});
      }
      out.push_back(std::move(doc));
    }
    return out;
  }
};

std::vector<nlohmann::json> run_tasks(StoredTaskRunner& r, const std::vector<PlannedTask>& tasks) {
  auto out = r.run("job", tasks, nullptr, [] { return false; }, nullptr);
  REQUIRE_MESSAGE(out.ok(), (out.ok() ? "" : out.error().describe()));
  return out.value();
}

}  // namespace

TEST_CASE("store: a store at schema 2 migrates to 3, keeps its rows, and keeps search results") {
  TempDir dir;
  {
    auto v2 = open_store(dir, 2);
    REQUIRE(v2->schema_version() == 2);
    REQUIRE(v2->write_job(synthetic_day({.airings = 40})).ok());
  }
  auto store = open_store(dir);
  CHECK(store->schema_version() == store_schema_version());
  CHECK(store_schema_version() >= 3);
  CHECK(store->counts().value().detections == 40);
  CHECK(store->counts().value().searches == 24 * 50);
  REQUIRE(store->store_results({{"search", "k1", "m1", "spot-a", R"({"matches":[]})", {}}}).ok());
  CHECK(store->stored_result("search", "k1", "m1", "spot-a") == std::optional<std::string>(R"({"matches":[]})"));
  CHECK_FALSE(store->stored_result("search", "k1", "m2", "spot-a"));
  CHECK_FALSE(store->stored_result("evidence", "k1", "m1", "spot-a"));
  CHECK(store->stored_results("search") == 1);
}

TEST_CASE("store: a file's digest is kept by its stat, follows a rename, and is made again when it changes") {
  TempDir dir;
  auto store = open_store(dir);
  // FIPS 180-2, appendix B.1: SHA-256("abc"); and of no bytes.
  const std::string abc = "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad";
  const std::string empty = "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855";
  write(dir.file("hour.wav"), "abc");
  CHECK(store->file_digest(dir.file("hour.wav")).value() == abc);
  std::filesystem::rename(dir.file("hour.wav"), dir.file("done.wav"));
  CHECK(store->file_digest(dir.file("done.wav")).value() == abc);
  auto rows = [&] { return store->read([](SqliteDb& db) { return db.scalar("SELECT count(*) FROM file_digests").value(); }); };
  CHECK(rows() == 1);  // the rename found the kept one
  write(dir.file("done.wav"), "");
  CHECK(store->file_digest(dir.file("done.wav")).value() == empty);
  CHECK(rows() == 2);
  CHECK_FALSE(store->file_digest(dir.file("missing.wav")).ok());
}

TEST_CASE("store: each piece searched once, and found again in another run at that run's time") {
  TempDir dir;
  auto store = open_store(dir);
  const double rate = 8000, margin = 50;
  write(dir.file("a.wav"), "hour a");
  write(dir.file("b.wav"), "hour b");
  std::vector<std::string> masters;
  for (const char* m : {"spot-a.wav", "spot-b.wav", "spot-c.wav"}) {
    write(dir.file(m), m);
    masters.push_back(dir.file(m));
  }
  auto part = [&](const char* f) { return ConcatPart{dir.file(f), static_cast<int64_t>(3600 * rate), 0, 0}; };
  PlanOptions plan;
  plan.at_files = true;
  plan.templates_per_task = 2;
  SegmentSpec base;
  const Stream hour_b{"run:0", {part("b.wav")}, rate, 3600};
  const Stream day{"run:0", {part("a.wav"), part("b.wav")}, rate, 7200};
  const auto alone = plan_tasks("b", base, {hour_b}, masters, margin, plan);
  const auto both = plan_tasks("day", base, {day}, masters, margin, plan);
  REQUIRE(alone.size() == 3 * 2);  // start, body, end; 2 batches of masters
  REQUIRE(both.size() == 5 * 2);   // a's start, a's body, a|b, b's body, b's end

  CountingRunner inner;
  StoredTaskRunner first(*store, inner, "options");
  const auto r1 = run_tasks(first, alone);
  CHECK(inner.masters_searched == 3 * 3);
  CHECK(first.counts().searched == 9);
  // The same tasks again: nothing searched, the same documents.
  StoredTaskRunner again(*store, inner, "options");
  CHECK(run_tasks(again, alone) == r1);
  CHECK(inner.masters_searched == 9);
  CHECK(again.counts().reused == 9);
  // The same masters named by another path (a library moved or spelled
  // otherwise): reused, and reported under the path this job names.
  std::filesystem::create_directories(dir.file("moved"));
  std::vector<std::string> moved;
  for (const auto& m : masters) {
    moved.push_back(dir.file("moved/" + std::filesystem::path(m).filename().string()));
    std::filesystem::copy_file(m, moved.back());
  }
  StoredTaskRunner elsewhere(*store, inner, "options");
  const auto r3 = run_tasks(elsewhere, plan_tasks("b", base, {hour_b}, moved, margin, plan));
  CHECK(elsewhere.counts().reused == 9);
  CHECK(r3[0]["templates"][0]["path"] == moved[0]);
  // The day: b's body and end are the hour's pieces; only a's pieces and a|b are searched.
  StoredTaskRunner whole(*store, inner, "options");
  const auto r2 = run_tasks(whole, both);
  CHECK(inner.masters_searched == 9 + 3 * 3);
  CHECK(whole.counts().reused == 2 * 3);
  // b's body, reused, reports its airings at day time: 3600 s later than alone.
  const auto offset = [](const nlohmann::json& doc) { return doc["matches"][0]["offset_s"].get<double>(); };
  CHECK(offset(r2[3 * 2]) == doctest::Approx(offset(r1[1 * 2]) + 3600).epsilon(1e-12));
  CHECK(offset(r1[1 * 2]) == doctest::Approx(kPieceLeadS + 1));
  CHECK(r2[3 * 2]["recordings"][0]["duration_s"].get<double>() == doctest::Approx(3600 + 10));
  // Other search options are other results.
  StoredTaskRunner other(*store, inner, "other options");
  (void)run_tasks(other, alone);
  CHECK(other.counts().searched == 9);
  // A master changed in place is searched again, alone.
  write(masters[1], "spot-b, re-edited");
  StoredTaskRunner edited(*store, inner, "options");
  (void)run_tasks(edited, alone);
  CHECK(edited.counts().searched == 3);
  CHECK(edited.counts().reused == 6);
}

namespace {

bool same_families(const Families& x, const Families& y) {
  if (x.family_of != y.family_of || x.family_name != y.family_name || x.links.size() != y.links.size()) return false;
  for (size_t i = 0; i < x.links.size(); ++i) {
    const auto &a = x.links[i], &b = y.links[i];
    if (a.a != b.a || a.b != b.b || a.score != b.score || a.lag_s != b.lag_s || a.distinct_a != b.distinct_a ||
        a.distinct_b != b.distinct_b)
      return false;
  }
  return true;
}

}  // namespace

TEST_CASE("store: a job's families found once, read back for the same masters and options, found again otherwise") {
  TempDir dir;
  auto store = open_store(dir);
  // Three masters at 8 kHz: a spot, its version with another closing
  // second (siblings), and an unrelated one. The files' bytes stand for
  // their audio (the store keys by file content).
  const double rate = 8000;
  std::mt19937 rng(7);
  std::normal_distribution<float> n(0, 1);
  auto noise = [&](size_t count) {
    Samples s(count);
    for (auto& v : s) v = n(rng);
    return s;
  };
  const Samples body = noise(3 * 8000), tag_a = noise(8000), tag_b = noise(8000);
  Samples a = body, b = body;
  a.insert(a.end(), tag_a.begin(), tag_a.end());
  b.insert(b.end(), tag_b.begin(), tag_b.end());
  const std::vector<Samples> audio{a, b, noise(4 * 8000)};
  FamilyQuery q;
  q.ids = {"spot-a", "spot-a-alt", "spot-c"};
  for (const auto& id : q.ids) {
    q.paths.push_back(dir.file(id + ".wav"));
    write(q.paths.back(), id);
  }
  q.rate_hz = rate;
  size_t finds = 0;
  auto ask = [&](const FamilyQuery& query) {
    CountingRunner inner;
    StoredTaskRunner kept(*store, inner, "options");
    auto f = kept.families(query, [&]() -> Result<Families> {
      ++finds;
      return find_families(query.ids, audio, query.rate_hz, query.declared, query.options);
    });
    REQUIRE(f.ok());
    CHECK(kept.counts().families_found + kept.counts().families_reused == 1);
    return std::pair{f.value(), kept.counts()};
  };
  const auto [found, c1] = ask(q);
  CHECK(finds == 1);
  CHECK(c1.families_found == 1);
  REQUIRE(found.links.size() == 1);  // spot-a and its version, as find_families scores them
  CHECK(found.siblings(0, 1));
  CHECK(!found.siblings(0, 2));
  // Again: read back, the same to the bit.
  const auto [again, c2] = ask(q);
  CHECK(finds == 1);
  CHECK(c2.families_reused == 1);
  CHECK(same_families(again, found));
  // Other options, a declared family, a master re-cut: found again each.
  FamilyQuery other = q;
  other.options.threshold = 0.6;
  (void)ask(other);
  CHECK(finds == 2);
  FamilyQuery declared = q;
  declared.declared[2] = "spot-a";
  (void)ask(declared);
  CHECK(finds == 3);
  write(q.paths[2], "spot-c, re-cut");
  (void)ask(q);
  CHECK(finds == 4);
  (void)ask(q);
  CHECK(finds == 4);
  // A kept row that does not fit the masters is not taken.
  CHECK(!families_from_json(families_to_json(found), 2).ok());
  CHECK(!families_from_json(nlohmann::json::parse(R"({"family_of":[0,5,1],"family_name":["a","b"],"links":[]})"), 3).ok());
  CHECK(!families_from_json(nlohmann::json::parse(R"({"family_of":[0]})"), 1).ok());
}

}  // namespace godwit
