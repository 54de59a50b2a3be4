// The store of record's history query under load, and a writer for the
// crash test.
//
//   store_bench [--state-dir DIR] [--stations 10] [--days 30] [--airings 500] [--queries 300]
//     fills a store (in a fresh temporary folder unless --state-dir) with
//     stations x days synthetic station-days (tests/server/store/store_fixture.h), one
//     job each, then times `airings` pages (limit 1000, as the op and the
//     command ask for them: query, rows, JSON) of named workloads and
//     prints p50/p99 beside bounds measured in the same run: a full scan
//     of the detections (SELECT count(*)) and of their rows with a sum over
//     one column.
//   store_bench --state-dir DIR --reuse ...   queries a store filled before
//   store_bench --fill-only --state-dir DIR [--first-day N] ...
//     writes the station-days and prints "committed KEY" after each commit
//     (flushed): the crash test kills it mid-write.
#include <CLI/CLI.hpp>
#include <algorithm>
#include <chrono>
#include <cstdio>
#include <filesystem>
#include <iostream>
#include <random>

#include "airings_query.h"
#include "record_store.h"
#include "store_fixture.h"

namespace {

using Clock = std::chrono::steady_clock;
double ms_since(Clock::time_point t) { return std::chrono::duration<double, std::milli>(Clock::now() - t).count(); }

std::string day_name(int n) {  // 2026-03-01 + n days
  const godwit::LocalSeconds t = *godwit::parse_iso8601_local("2026-03-01T00:00:00") + 86400.0 * n;
  return godwit::format_iso8601_local(t, 0).substr(0, 10);
}

double pct(std::vector<double> v, double p) {
  std::sort(v.begin(), v.end());
  return v[std::min(v.size() - 1, static_cast<size_t>(p * static_cast<double>(v.size())))];
}

}  // namespace

int main(int argc, char** argv) {
  CLI::App app{"store_bench: the history query over a filled store of record"};
  std::string state_dir;
  int stations = 10, days = 30, first_day = 0, queries = 300;
  size_t airings = 500;
  bool fill_only = false, reuse = false;
  app.add_option("--state-dir", state_dir, "store here (default: a fresh temporary folder, removed after)");
  app.add_option("--stations", stations)->check(CLI::Range(1, 1000));
  app.add_option("--days", days)->check(CLI::Range(1, 3650));
  app.add_option("--first-day", first_day, "days after 2026-03-01 of the first day")->check(CLI::Range(0, 3650));
  app.add_option("--airings", airings, "per station-day")->check(CLI::Range(1, 100000));
  app.add_option("--queries", queries, "per workload")->check(CLI::Range(1, 100000));
  app.add_flag("--fill-only", fill_only, "write and print each job's key once committed");
  app.add_flag("--reuse", reuse, "with --state-dir: query the store there as it is (filled by an earlier run)");
  CLI11_PARSE(app, argc, argv);

  std::filesystem::path dir = state_dir;
  const bool temporary = state_dir.empty();
  if (temporary) {
    dir = std::filesystem::temp_directory_path() / ("store_bench." + std::to_string(::getpid()));
    std::filesystem::remove_all(dir);
  }
  auto opened = godwit::RecordStore::open(dir.string());
  if (!opened) {
    std::cerr << "store_bench: " << opened.error().describe() << "\n";
    return 5;
  }
  godwit::RecordStore& store = *opened.value();
  std::vector<std::string> names;
  const char* birds[] = {"kestrel", "heron", "osprey", "curlew", "plover", "avocet", "dunlin", "merlin", "tern", "wren"};
  for (int s = 0; s < stations; ++s)
    names.push_back(std::string(birds[s % 10]) + (s >= 10 ? std::to_string(s / 10) : "") + "-fm");

  const auto fill_start = Clock::now();
  for (int d = first_day; d < first_day + days && !reuse; ++d)
    for (const auto& name : names) {
      godwit::test::SyntheticDay sd;
      sd.station = name;
      sd.day = day_name(d);
      sd.airings = airings;
      auto job = godwit::test::synthetic_day(sd);
      if (auto st = store.write_job(job); !st) {
        std::cerr << "store_bench: " << st.error().describe() << "\n";
        return 5;
      }
      if (fill_only) std::cout << "committed " << job.key << std::endl;
    }
  const double fill_ms = ms_since(fill_start);
  if (fill_only) return 0;

  const auto counts = store.counts().value();
  std::printf("store: %d stations x %d days x %zu airings: %lld detections, %lld placements; filled in %.1f s "
              "(%.1f ms per station-day job)\n",
              stations, days, airings, static_cast<long long>(counts.detections),
              static_cast<long long>(counts.placements), fill_ms / 1000, fill_ms / (stations * days));

  std::mt19937 rng(42);
  auto any_day = [&] { return std::uniform_int_distribution<int>(first_day, first_day + days - 1)(rng); };
  auto any_station = [&] { return names[std::uniform_int_distribution<size_t>(0, names.size() - 1)(rng)]; };
  const godwit::LocalSeconds from = *godwit::parse_range_start(day_name(first_day));
  const godwit::LocalSeconds to = *godwit::parse_range_end(day_name(first_day + days - 1));
  struct Workload {
    const char* name;
    std::function<godwit::AiringsQuery()> make;
  };
  std::vector<Workload> workloads = {
      {"one station, one day", [&] {
         godwit::AiringsQuery q;
         q.station = any_station();
         q.from_local = *godwit::parse_range_start(day_name(any_day()));
         q.to_local = q.from_local + 86400;
         return q;
       }},
      {"one station, whole range, first page", [&] {
         godwit::AiringsQuery q;
         q.station = any_station();
         q.from_local = from;
         q.to_local = to;
         return q;
       }},
      {"one station, whole range, page at a random day", [&] {
         godwit::AiringsQuery q;
         q.station = any_station();
         q.from_local = from;
         q.to_local = to;
         q.cursor = std::to_string(*godwit::parse_range_start(day_name(any_day()))) + "/0";
         return q;
       }},
      {"every station, one hour", [&] {
         godwit::AiringsQuery q;
         q.from_local = *godwit::parse_range_start(day_name(any_day())) + 3600.0 * std::uniform_int_distribution<int>(0, 23)(rng);
         q.to_local = q.from_local + 3600;
         return q;
       }},
      {"one advertiser, whole range, first page", [&] {
         godwit::AiringsQuery q;
         q.advertiser = godwit::test::advertiser_name(std::uniform_int_distribution<size_t>(0, 19)(rng));
         q.from_local = from;
         q.to_local = to;
         return q;
       }},
      {"one spot, one station, whole range", [&] {
         godwit::AiringsQuery q;
         q.station = any_station();
         q.spot = godwit::test::spot_name(std::uniform_int_distribution<size_t>(0, 49)(rng));
         q.from_local = from;
         q.to_local = to;
         return q;
       }},
  };

  // Bounds: what reading every detection costs, in the same run.
  std::vector<double> scan_ms, rows_ms;
  for (int i = 0; i < 5; ++i) {
    auto t = Clock::now();
    (void)store.read([](godwit::SqliteDb& db) { return db.scalar("SELECT count(*) FROM detections"); });
    scan_ms.push_back(ms_since(t));
    t = Clock::now();
    (void)store.read([](godwit::SqliteDb& db) {
      return db.scalar("SELECT CAST(sum(score * 1000) AS INTEGER) FROM detections");
    });
    rows_ms.push_back(ms_since(t));
  }
  std::printf("bound: SELECT count(*) over %lld detections p50 %.2f ms; a sum over every row p50 %.2f ms\n",
              static_cast<long long>(counts.detections), pct(scan_ms, 0.5), pct(rows_ms, 0.5));

  std::printf("%-48s %6s %9s %9s %9s %11s %11s\n", "workload (page of <= 1000, with JSON)", "rows", "p50 ms", "p99 ms",
              "max ms", "SQL p50 ms", "SQL p99 ms");
  double worst_p99 = 0;
  for (const auto& w : workloads) {
    std::vector<double> t_ms, sql_ms;
    size_t rows = 0;
    for (int i = 0; i < queries; ++i) {
      const godwit::AiringsQuery q = w.make();
      const auto t = Clock::now();
      auto page = store.read([&](godwit::SqliteDb& db) { return godwit::query_airings(db, q); });
      sql_ms.push_back(ms_since(t));
      if (!page) {
        std::cerr << "store_bench: " << page.error().describe() << "\n";
        return 5;
      }
      nlohmann::json list = nlohmann::json::array();
      for (const auto& a : page.value().airings) list.push_back(godwit::airing_to_json(a));
      const std::string text = list.dump();
      t_ms.push_back(ms_since(t));
      rows += page.value().airings.size();
    }
    const double p99 = pct(t_ms, 0.99);
    worst_p99 = std::max(worst_p99, p99);
    std::printf("%-48s %6.0f %9.2f %9.2f %9.2f %11.2f %11.2f\n", w.name, static_cast<double>(rows) / queries,
                pct(t_ms, 0.5), p99, pct(t_ms, 1.0), pct(sql_ms, 0.5), pct(sql_ms, 0.99));
  }
  std::printf("worst p99 %.2f ms (target <= 50 ms; SQL p* = the query and its rows, before the JSON)\n", worst_p99);
  if (temporary) {
    opened.value().reset();
    std::filesystem::remove_all(dir);
  }
  return 0;
}
