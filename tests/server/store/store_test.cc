// The store of record with real SQLite files: schema and migrations,
// transactional writes, the re-run rules, and the history queries over
// several days and two stations.
#include "record_store.h"

#include <doctest/doctest.h>

#include <set>

#include "airings_query.h"
#include "proof_report.h"
#include "reconcile_record.h"
#include "store_fixture.h"
#include "store_schema.h"
#include "test_util.h"

namespace godwit {
namespace {

using test::synthetic_day;
using test::SyntheticDay;
using test::TempDir;

std::unique_ptr<RecordStore> open_store(const TempDir& dir, int version = -1) {
  auto s = RecordStore::open_file(dir.file("store.sqlite"), true, version);
  REQUIRE_MESSAGE(s.ok(), (s.ok() ? "" : s.error().describe()));
  return std::move(s.value());
}

std::vector<AiringRow> all_airings(RecordStore& store, AiringsQuery q) {
  std::vector<AiringRow> out;
  for (;;) {
    auto page = store.read([&](SqliteDb& db) { return query_airings(db, q); });
    REQUIRE_MESSAGE(page.ok(), (page.ok() ? "" : page.error().describe()));
    for (auto& a : page.value().airings) out.push_back(std::move(a));
    if (page.value().next_cursor.empty()) return out;
    q.cursor = page.value().next_cursor;
  }
}

LocalSeconds at(const std::string& iso) { return *parse_iso8601_local(iso); }

}  // namespace

TEST_CASE("store: a new store is at this build's schema, in WAL mode") {
  TempDir dir;
  auto store = open_store(dir);
  CHECK(store->schema_version() == store_schema_version());
  CHECK(store_schema_version() >= 2);
  auto mode = store->read([](SqliteDb& db) {
    auto st = db.prepare("PRAGMA journal_mode");
    (void)st.value().step();
    return st.value().text(0);
  });
  CHECK(mode == "wal");
  // Reopening changes nothing.
  store.reset();
  CHECK(open_store(dir)->schema_version() == store_schema_version());
}

TEST_CASE("store: a store created at schema 1 migrates and keeps its rows") {
  TempDir dir;
  {
    auto v1 = open_store(dir, 1);
    REQUIRE(v1->schema_version() == 1);
    auto st = v1->write_job(synthetic_day({.airings = 40}));
    REQUIRE_MESSAGE(st.ok(), (st.ok() ? "" : st.error().describe()));
    CHECK(v1->counts().value().searches == 0);  // no such table yet
  }
  auto store = open_store(dir);
  CHECK(store->schema_version() == store_schema_version());
  const StoreCounts c = store->counts().value();
  CHECK(c.jobs == 1);
  CHECK(c.detections == 40);
  CHECK(c.recordings == 24);
  // Schema 2's indexes exist and the query uses them.
  auto plan = store->read([](SqliteDb& db) {
    auto st = db.prepare("EXPLAIN QUERY PLAN SELECT id FROM detections WHERE station_id = 1 AND aired_local >= 0 "
                         "ORDER BY aired_local");
    std::string all;
    while (st.value().step().value()) all += st.value().text(3) + "\n";
    return all;
  });
  CHECK(plan.find("detections_station_time") != std::string::npos);
  // The migrated store takes new jobs, with their searches.
  REQUIRE(store->write_job(synthetic_day({.day = "2026-03-15", .airings = 40})).ok());
  CHECK(store->counts().value().searches == 24 * 50);
  CHECK(store->counts().value().detections == 80);
}

TEST_CASE("store: an airing's tempo is kept, and detections stored before schema 4 read tempo 1") {
  TempDir dir;
  {
    auto v3 = open_store(dir, 3);
    REQUIRE(v3->write_job(synthetic_day({.airings = 10})).ok());
  }
  auto store = open_store(dir);
  REQUIRE(store->schema_version() == store_schema_version());
  SyntheticDay later{.day = "2026-03-15", .airings = 10};
  JobRecord job = synthetic_day(later);
  REQUIRE(job.detections.size() == 10);
  job.detections[3].tempo = 0.9712;  // time-stretched, pitch kept
  REQUIRE(store->write_job(job).ok());
  AiringsQuery q;
  q.from_local = at("2026-03-14T00:00:00");
  q.to_local = at("2026-03-16T00:00:00");
  const auto rows = all_airings(*store, q);
  REQUIRE(rows.size() == 20);
  size_t stretched = 0;
  for (const auto& a : rows) {
    if (a.tempo != 1.0) {
      ++stretched;
      CHECK(a.tempo == doctest::Approx(0.9712));
      CHECK(a.aired_local >= at("2026-03-15T00:00:00"));
      CHECK(airing_to_json(a)["tempo"].get<double>() == doctest::Approx(0.9712));
    }
  }
  CHECK(stretched == 1);
  CHECK(airings_csv_header().find("speed,tempo,") != std::string::npos);
}

TEST_CASE("store: a store newer than this build is refused") {
  TempDir dir;
  open_store(dir);
  {
    auto db = SqliteDb::open(dir.file("store.sqlite"), false).value();
    REQUIRE(db->exec("PRAGMA user_version = 99").ok());
  }
  auto s = RecordStore::open_file(dir.file("store.sqlite"));
  REQUIRE_FALSE(s.ok());
  CHECK(s.error().code == ErrorCode::usage);
  CHECK(s.error().message.find("newer") != std::string::npos);
}

TEST_CASE("store: a job that fails part way leaves nothing of itself") {
  TempDir dir;
  auto store = open_store(dir);
  REQUIRE(store->write_job(synthetic_day({.day = "2026-03-13", .airings = 30})).ok());
  const StoreCounts before = store->counts().value();
  for (const char* table : {"jobs", "recordings", "masters", "detections", "searches", "placements"}) {
    CAPTURE(table);
    auto st = store->write_job(synthetic_day({.airings = 30}), [&](std::string_view t, size_t i) -> Status {
      if (t == table && i == 3) return Error{ErrorCode::io, "injected failure", "", std::nullopt};
      if (t == "jobs" && std::string_view(table) == "jobs") return Error{ErrorCode::io, "injected failure", "", std::nullopt};
      return ok_status();
    });
    REQUIRE_FALSE(st.ok());
    CHECK(st.error().message == "injected failure");
    const StoreCounts after = store->counts().value();
    CHECK(after.jobs == before.jobs);
    CHECK(after.detections == before.detections);
    CHECK(after.placements == before.placements);
    CHECK(after.recordings == before.recordings);
    CHECK(after.masters == before.masters);
    CHECK(after.searches == before.searches);
    CHECK(after.stations == before.stations);
  }
  // The same job then goes in whole.
  REQUIRE(store->write_job(synthetic_day({.airings = 30})).ok());
  CHECK(store->counts().value().detections == before.detections + 30);
  // A job key is written once.
  auto again = store->write_job(synthetic_day({.airings = 30}));
  REQUIRE_FALSE(again.ok());
  CHECK(again.error().code == ErrorCode::usage);
}

TEST_CASE("store: re-running a station-day replaces its rows instead of adding to them") {
  TempDir dir;
  auto store = open_store(dir);
  REQUIRE(store->write_job(synthetic_day({.airings = 100, .variant = 0})).ok());
  const StoreCounts first = store->counts().value();
  // Same offsets, a new job: updated in place.
  REQUIRE(store->write_job(synthetic_day({.airings = 100, .variant = 2})).ok());
  StoreCounts c = store->counts().value();
  CHECK(c.detections == first.detections);
  CHECK(c.placements == first.placements);
  CHECK(c.recordings == first.recordings);
  CHECK(c.masters == first.masters);
  CHECK(c.jobs == 2);
  // Every offset moved by 1 s: the old detections of the pairs searched go.
  REQUIRE(store->write_job(synthetic_day({.airings = 100, .variant = 3})).ok());
  c = store->counts().value();
  CHECK(c.detections == first.detections);
  CHECK(c.placements == first.placements);
  // An edited log without five of its slots: the day holds the new plan only.
  JobRecord edited = synthetic_day({.airings = 100, .variant = 5});
  edited.placements.erase(edited.placements.begin() + 10, edited.placements.begin() + 15);
  REQUIRE(store->write_job(edited).ok());
  CHECK(store->counts().value().placements == first.placements - 5);
  // Another day of the same station is left alone, though its log's first
  // placement is of the day before (planned at 23:59, aired late).
  JobRecord next = synthetic_day({.day = "2026-03-15", .airings = 100});
  next.placements.front().planned_local = at("2026-03-14T23:59:00");
  next.placements.front().planned = "2026-03-14T23:59:00";
  REQUIRE(store->write_job(next).ok());
  CHECK(store->counts().value().placements == 2 * first.placements - 5);
  // A log of the same file name for another day ("today.csv" reused) leaves
  // the earlier days' plans alone.
  JobRecord reused = synthetic_day({.day = "2026-03-20", .airings = 100});
  reused.schedule = next.schedule;
  REQUIRE(store->write_job(reused).ok());
  CHECK(store->counts().value().placements == 3 * first.placements - 5);
}

TEST_CASE("store: airings over several days and two stations, in time order and paged") {
  TempDir dir;
  auto store = open_store(dir);
  for (const char* day : {"2026-03-14", "2026-03-15", "2026-03-16"})
    for (const char* station : {"kestrel-fm", "heron-radio"})
      REQUIRE(store->write_job(synthetic_day({.station = station, .day = day, .airings = 60})).ok());
  AiringsQuery all;
  all.from_local = at("2026-03-14T00:00:00");
  all.to_local = at("2026-03-17T00:00:00");
  auto rows = all_airings(*store, all);
  CHECK(rows.size() == 6 * 60);
  for (size_t i = 1; i < rows.size(); ++i) CHECK(rows[i - 1].aired_local <= rows[i].aired_local);

  // Paged in small pages: the same airings, none twice.
  AiringsQuery paged = all;
  paged.limit = 7;
  auto pages = all_airings(*store, paged);
  REQUIRE(pages.size() == rows.size());
  std::set<int64_t> ids;
  for (size_t i = 0; i < pages.size(); ++i) {
    CHECK(pages[i].id == rows[i].id);
    ids.insert(pages[i].id);
  }
  CHECK(ids.size() == rows.size());

  // One station, one day (--to a date includes the whole day).
  AiringsQuery one = all;
  one.station = "heron-radio";
  one.from_local = *parse_range_start("2026-03-15");
  one.to_local = *parse_range_end("2026-03-15");
  auto day = all_airings(*store, one);
  CHECK(day.size() == 60);
  for (const auto& a : day) {
    CHECK(a.station == "heron-radio");
    CHECK(format_iso8601_local(a.aired_local, 0).substr(0, 10) == "2026-03-15");
    CHECK(a.recording_sha256.size() == 64);
  }
  // Verdicts: every 10th airing unscheduled, the rest served a placement.
  size_t unscheduled = 0;
  for (const auto& a : day) {
    if (a.status == "unscheduled") ++unscheduled;
    else CHECK_FALSE(a.slot.empty());
  }
  CHECK(unscheduled == 6);

  // By spot and by advertiser.
  AiringsQuery spot = all;
  spot.spot = "spot-07";
  for (const auto& a : all_airings(*store, spot)) CHECK(a.spot == "spot-07");
  CHECK(all_airings(*store, spot).size() > 0);
  AiringsQuery adv = all;
  adv.advertiser = "Advertiser 03";
  const auto by_adv = all_airings(*store, adv);
  CHECK(by_adv.size() > 0);
  for (const auto& a : by_adv) CHECK(a.advertiser == "Advertiser 03");

  // Errors are values.
  AiringsQuery bad = all;
  bad.station = "osprey-am";
  auto r = store->read([&](SqliteDb& db) { return query_airings(db, bad); });
  REQUIRE_FALSE(r.ok());
  CHECK(r.error().code == ErrorCode::usage);
  CHECK(r.error().message.find("heron-radio") != std::string::npos);
  bad = all;
  bad.cursor = "not a cursor";
  CHECK_FALSE(store->read([&](SqliteDb& db) { return query_airings(db, bad); }).ok());
  CHECK_FALSE(parse_range_start("2026-02-30").has_value());
}

TEST_CASE("store: proof of performance counts placements per station, spot and day") {
  TempDir dir;
  auto store = open_store(dir);
  for (const char* day : {"2026-03-14", "2026-03-15"})
    for (const char* station : {"kestrel-fm", "heron-radio"})
      REQUIRE(store->write_job(synthetic_day({.station = station, .day = day, .airings = 100})).ok());
  ProofQuery q;
  q.advertiser = "Advertiser 00";  // the fixture's missing placements are of advertisers 00 and 10
  q.from_local = at("2026-03-14T00:00:00");
  q.to_local = at("2026-03-16T00:00:00");
  auto doc_r = store->read([&](SqliteDb& db) { return build_proof(db, q, "now"); });
  REQUIRE_MESSAGE(doc_r.ok(), (doc_r.ok() ? "" : doc_r.error().describe()));
  const auto& doc = doc_r.value();
  REQUIRE(doc["stations"].size() == 2);
  int ordered = 0, owed = 0;
  for (const auto& st : doc["stations"]) {
    for (const auto& p : st["placements"]) {
      ++ordered;
      if (p["owed"].get<bool>()) ++owed;
      if (p["status"] == "aired") CHECK(p["airing"]["recording_sha256"].get<std::string>().size() == 64);
      if (p["status"] == "missing") CHECK_FALSE(p.contains("airing"));
    }
    CHECK(st["owed"].size() == st["totals"]["owed"].get<size_t>());
    CHECK(st["recordings"].size() == 48);  // two days of hour files
  }
  CHECK(doc["totals"]["ordered"] == ordered);
  CHECK(doc["totals"]["owed"] == owed);
  CHECK(owed > 0);
  int by_day = 0;
  for (const auto& c : doc["totals_by_spot_day"]) by_day += c["ordered"].get<int>();
  CHECK(by_day == ordered);
  CHECK(doc["cautions"].size() == 2);
  ProofQuery neither = q;
  neither.advertiser.clear();
  CHECK_FALSE(store->read([&](SqliteDb& db) { return build_proof(db, neither, ""); }).ok());
}

TEST_CASE("a detection is kept against the recording it aired in, when one path is given twice") {
  // One file given for two hours (explicit starts): two recording rows of
  // one path; the airing of the second hour is the second row's.
  ReconcileResult r;
  for (double start : {6 * 3600.0, 7 * 3600.0}) {
    RecordingStatus s;
    s.path = "/nonexistent/air/x.wav";
    s.start_s = start;
    s.duration_s = 3600;
    r.recordings.push_back(s);
  }
  r.spots["m"] = SpotInfo{"/nonexistent/lib/m.wav", 12, {}};
  for (size_t i : {1, 0}) {
    AiringRecord a;
    a.spot = "m";
    a.recording = r.recordings[i].path;
    a.recording_id = RecordingId{i};
    a.offset_s = 5;
    a.aired_s = *r.recordings[i].start_s + 5;
    r.airings.push_back(a);
  }
  RecordContext context;
  context.station = "kestrel-fm";
  const JobRecord job = job_record(r, ReconcileOptions{}, context, nullptr);
  REQUIRE(job.recordings.size() == 2);
  REQUIRE(job.detections.size() == 2);
  CHECK(job.detections[0].recording == 1);
  CHECK(job.detections[1].recording == 0);
}

}  // namespace godwit
