// Queue mode's pure parts: the queue URL, the task plan and the merge.
#include "task_plan.h"

#include <doctest/doctest.h>

#include <set>

#include "redis_connection.h"

using namespace godwit;

TEST_CASE("queue URLs: host, port, stream; bad ones are usage errors") {
  auto q = parse_queue_url("redis://10.1.2.3:6380/kestrel-tasks");
  REQUIRE(q);
  CHECK(q.value().host == "10.1.2.3");
  CHECK(q.value().port == 6380);
  CHECK(q.value().stream == "kestrel-tasks");
  auto d = parse_queue_url("redis://queue-host");
  REQUIRE(d);
  CHECK(d.value().port == 6379);
  CHECK(d.value().stream == "godwit");
  auto v6 = parse_queue_url("redis://[::1]:7000/s");
  REQUIRE(v6);
  CHECK(v6.value().host == "::1");
  CHECK(v6.value().port == 7000);
  for (const char* bad : {"http://x:1/s", "redis://:6379/s", "redis://h:99999/s", "redis://h:12ab/s", "redis://[::1/s"}) {
    CAPTURE(bad);
    auto r = parse_queue_url(bad);
    REQUIRE(!r);
    CHECK(r.error().code == ErrorCode::usage);
  }
}

TEST_CASE("a locate job splits into recording x master-batch tasks with stable, distinct ids") {
  nlohmann::json spec{{"kind", "locate"},
                      {"recordings", {"/air/a.flac", "/air/b.flac", "/air/a.flac"}},
                      {"templates", {"/lib/t1.wav", "/lib/t2.wav", "/lib/t3.wav"}},
                      {"threshold", 0.4}};
  const auto tasks = plan_tasks("j1", spec, 2);
  REQUIRE(tasks.size() == 6);  // 3 recordings x (2 + 1 masters)
  CHECK(tasks[0].spec["recordings"] == nlohmann::json::array({"/air/a.flac"}));
  CHECK(tasks[0].spec["templates"] == nlohmann::json::array({"/lib/t1.wav", "/lib/t2.wav"}));
  CHECK(tasks[1].spec["templates"] == nlohmann::json::array({"/lib/t3.wav"}));
  CHECK(tasks[0].spec["threshold"] == 0.4);
  std::set<std::string> ids;
  for (const auto& t : tasks) ids.insert(t.id);
  CHECK(ids.size() == 6);  // a file listed twice is searched twice
  const auto again = plan_tasks("j1", spec, 2);
  for (size_t i = 0; i < tasks.size(); ++i) CHECK(again[i].id == tasks[i].id);
  CHECK(plan_tasks("j2", spec, 2)[0].id != tasks[0].id);
  nlohmann::json rec{{"kind", "reconcile"}, {"recordings", {"/air/a.flac"}}, {"library", "/lib"}, {"schedule", "/s.csv"}};
  CHECK(plan_tasks("j3", rec, 2).size() == 1);
}

TEST_CASE("merging task results orders matches as one process does and keeps a recording's error") {
  nlohmann::json spec{{"kind", "locate"}, {"recordings", {"a.flac", "b.flac"}}, {"templates", {"t1", "t2"}}};
  const auto tasks = plan_tasks("j", spec, 1);  // a x t1, a x t2, b x t1, b x t2
  auto doc = [](const char* rec, const char* tmpl, double off, bool error) {
    nlohmann::json r{{"path", rec}, {"format", "flac"}};
    if (error) r["error"] = {{"code", "corrupt"}, {"message", "broke"}};
    return nlohmann::json{{"analysis_rate_hz", 8000.0},
                          {"templates", {{{"id", tmpl}}}},
                          {"recordings", {r}},
                          {"matches", {{{"template", tmpl}, {"recording", rec}, {"offset_s", off}}}}};
  };
  const std::vector<nlohmann::json> results{doc("a.flac", "t1", 9.0, false), doc("a.flac", "t2", 3.0, false),
                                            doc("b.flac", "t1", 1.0, false), doc("b.flac", "t2", 2.0, true)};
  auto m = merge_results(spec, tasks, results);
  REQUIRE(m);
  const auto& j = m.value();
  REQUIRE(j["matches"].size() == 4);
  CHECK(j["matches"][0]["offset_s"] == 3.0);  // a.flac first, by offset
  CHECK(j["matches"][1]["offset_s"] == 9.0);
  CHECK(j["matches"][2]["recording"] == "b.flac");
  CHECK(j["templates"].size() == 2);
  REQUIRE(j["recordings"].size() == 2);
  CHECK(j["recordings"][1].contains("error"));
  CHECK(j["complete"] == false);
  CHECK(j["tasks"] == 4);
  CHECK(!merge_results(spec, tasks, {results[0]}));
}
