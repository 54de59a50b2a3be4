// Retention of finished jobs in the daemon's journal: by age and by count,
// the journal compacted, finished jobs' specs not held, and every
// acknowledged unfinished job still there after a restart.
#include "job_store.h"

#include <doctest/doctest.h>

#include <algorithm>
#include <ctime>
#include <filesystem>
#include <fstream>
#include <sstream>

#include "test_util.h"

namespace godwit {
namespace {

using test::TempDir;

nlohmann::json spec(int i) {
  return {{"kind", "locate"},
          {"recordings", {"/air/kestrel-fm-20260314T0" + std::to_string(i % 10) + "0000.flac"}},
          {"templates", {"/library/marlow-bakery.wav", "/library/tidewater-tyres-spring.wav"}}};
}

std::string journal_of(const TempDir& dir) {
  std::ifstream in(dir.file("state/journal.jsonl"));
  std::stringstream ss;
  ss << in.rdbuf();
  return ss.str();
}

size_t lines_of(const std::string& text) { return static_cast<size_t>(std::count(text.begin(), text.end(), '\n')); }

std::string run_one(JobStore& store, int i) {
  auto id = store.submit(spec(i));
  REQUIRE(id.ok());
  auto job = store.take();
  REQUIRE(job);
  REQUIRE(job->id == id.value());
  store.finish(job->id, {{"matches", nlohmann::json::array()}});
  return job->id;
}

TEST_CASE("finished jobs past their age are forgotten and a restart keeps every unfinished job") {
  TempDir dir;
  const std::string state = dir.file("state");
  std::vector<std::string> done;
  std::string running, queued;
  {
    auto opened = JobStore::open(state, 10, 100, 30 * 86400.0);
    REQUIRE(opened.ok());
    JobStore& store = *opened.value();
    for (int i = 0; i < 3; ++i) done.push_back(run_one(store, i));
    // A finished job is held without its spec.
    CHECK(store.get(done[0])->spec == nlohmann::json{{"kind", "locate"}});
    CHECK(!store.get(done[0])->finished.empty());
    running = store.submit(spec(7)).value();
    REQUIRE(store.take()->id == running);
    queued = store.submit(spec(8)).value();
    CHECK(store.expire(static_cast<double>(std::time(nullptr))) == 0);  // none is 30 days old yet
    CHECK(store.expire(static_cast<double>(std::time(nullptr)) + 31 * 86400.0) == 3);
    for (const auto& id : done) {
      CHECK(!store.get(id));
      CHECK(!std::filesystem::exists(state + "/results/" + id + ".json"));
    }
    // Compacted: the two unfinished jobs' submit lines, nothing of the others.
    const std::string text = journal_of(dir);
    CHECK(lines_of(text) == 2);
    CHECK(store.journal_lines() == 2);
    for (const auto& id : done) CHECK(text.find(id) == std::string::npos);
    // Appends go to the new journal.
    const std::string after = store.submit(spec(9)).value();
    CHECK(journal_of(dir).find(after) != std::string::npos);
    store.stop();
  }
  auto reopened = JobStore::open(state, 10, 100, 30 * 86400.0);
  REQUIRE(reopened.ok());
  JobStore& store = *reopened.value();
  CHECK(store.queued() == 3);  // the running one queued again, first; then the two queued
  for (const auto& id : done) CHECK(!store.get(id));
  auto again = store.take();
  REQUIRE(again);
  CHECK(again->id == running);
  CHECK(again->spec == spec(7));  // an unfinished job keeps its whole spec
  CHECK(store.take()->spec == spec(8));
}

TEST_CASE("beyond max_finished_jobs the oldest go and the journal stays within twice its compacted length") {
  TempDir dir;
  const std::string state = dir.file("state");
  std::vector<std::string> ids;
  {
    auto opened = JobStore::open(state, 10, 5, 0);  // no age limit
    REQUIRE(opened.ok());
    JobStore& store = *opened.value();
    for (int i = 0; i < 200; ++i) {
      ids.push_back(run_one(store, i));
      // A compacted journal has one line per finished job (5); it is
      // rewritten once past 2 x 5 + 64 (each job adds done, submit and pruned lines).
      REQUIRE(store.journal_lines() <= 2 * 5 + 64 + 3);
      REQUIRE(lines_of(journal_of(dir)) == store.journal_lines());
    }
    CHECK(store.list(std::nullopt).size() == 5);
  }
  auto reopened = JobStore::open(state, 10, 5, 0);
  REQUIRE(reopened.ok());
  const auto jobs = reopened.value()->list(std::nullopt);
  REQUIRE(jobs.size() == 5);
  for (size_t i = 0; i < 5; ++i) CHECK(reopened.value()->get(ids[195 + i]));
  CHECK(lines_of(journal_of(dir)) == 5);
  size_t results = 0;
  for (const auto& e : std::filesystem::directory_iterator(state + "/results")) results += e.path().extension() == ".json";
  CHECK(results == 5);
}

TEST_CASE("a journal written before retention replays and ages its jobs by their submission") {
  TempDir dir;
  const std::string state = dir.file("state");
  std::filesystem::create_directories(state + "/results");
  {
    std::ofstream j(state + "/journal.jsonl");
    // The older format: terminal lines without "finished".
    j << R"({"event":"submit","job":"jold","spec":{"kind":"locate","recordings":["/a.flac"],"templates":["/t.wav"]},"submitted":"2020-01-01T00:00:00Z"})" "\n"
      << R"({"event":"done","job":"jold"})" "\n"
      << R"({"event":"submit","job":"jnew","spec":{"kind":"locate","recordings":["/b.flac"],"templates":["/t.wav"]},"submitted":"2099-01-01T00:00:00Z"})" "\n"
      << R"({"event":"failed","error":{"code":"io","message":"x"},"job":"jnew"})" "\n"
      << R"({"event":"submit","job":"jq","spec":{"kind":"locate","recordings":["/c.flac"],"templates":["/t.wav"]},"submitted":"2020-01-01T00:00:00Z"})" "\n";
    std::ofstream(state + "/results/jold.json") << "{}\n";
  }
  auto opened = JobStore::open(state, 10, 100, 30 * 86400.0);
  REQUIRE(opened.ok());
  JobStore& store = *opened.value();
  CHECK(!store.get("jold"));  // finished in 2020: past 30 days
  CHECK(!std::filesystem::exists(state + "/results/jold.json"));
  REQUIRE(store.get("jnew"));
  CHECK(store.get("jnew")->state == JobState::failed);
  CHECK(store.get("jnew")->error["code"] == "io");
  REQUIRE(store.get("jq"));  // unfinished jobs never age
  CHECK(store.get("jq")->state == JobState::queued);
  const std::string text = journal_of(dir);
  CHECK(lines_of(text) == 2);  // compacted: jnew's one line, jq's submit
  CHECK(text.find("jold") == std::string::npos);
}

TEST_CASE("a done job kept as one line whose result has gone is failed at open, not run again") {
  TempDir dir;
  const std::string state = dir.file("state");
  {
    auto opened = JobStore::open(state, 10, 100, 30 * 86400.0);
    REQUIRE(opened.ok());
    run_one(*opened.value(), 1);
    run_one(*opened.value(), 2);
    CHECK(opened.value()->expire(static_cast<double>(std::time(nullptr)) + 86400.0) == 0);
  }
  {  // compacted at open by the age rule, with jobs still young: force a rewrite
    auto opened = JobStore::open(state, 10, 1, 30 * 86400.0);
    REQUIRE(opened.ok());
    CHECK(opened.value()->list(std::nullopt).size() == 1);
  }
  const std::string text = journal_of(dir);
  REQUIRE(lines_of(text) == 1);
  REQUIRE(text.find("\"finished\"") != std::string::npos);
  const std::string kept = nlohmann::json::parse(text)["job"];
  std::filesystem::remove(state + "/results/" + kept + ".json");
  auto opened = JobStore::open(state, 10, 100, 30 * 86400.0);
  REQUIRE(opened.ok());
  REQUIRE(opened.value()->get(kept));
  CHECK(opened.value()->get(kept)->state == JobState::failed);
  CHECK(opened.value()->queued() == 0);
}

}  // namespace
}  // namespace godwit
