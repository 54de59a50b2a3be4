// A job run as tasks on this machine (LocalTaskRunner) gives the document
// of the same job run in one process (JobRunner::run): the seam where the
// queue's workers, or a store of task results, take the tasks over.
#include "planned_job.h"

#include <doctest/doctest.h>

#include <cmath>

#include "synth.h"
#include "test_util.h"

using namespace godwit;

namespace {

Samples spot(double dur_s, double rate, uint64_t seed) {
  Samples s = synth::music(dur_s, rate, seed);
  synth::set_rms(s, 0.07);
  synth::mix_into(s, synth::voice(dur_s - 2, rate, seed + 1), 0, 1.0);
  synth::set_rms(s, 0.1);
  return s;
}

}  // namespace

TEST_CASE("a locate job run as tasks here gives the matches of the job run whole") {
  test::TempDir dir;
  const std::string root = dir.path().string();
  const double rate = 16000;
  const Samples a = spot(12, rate, 1), b = spot(9, rate, 5);
  std::filesystem::create_directories(root + "/lib");
  std::filesystem::create_directories(root + "/air");
  REQUIRE(synth::write_audio(root + "/lib/alpha.wav", a, 1, rate).empty());
  REQUIRE(synth::write_audio(root + "/lib/beta.wav", b, 1, rate).empty());
  // Two consecutive files (one run of 180 s); an airing straddles them.
  Samples f1 = synth::programme(90, rate, 11), f2 = synth::programme(90, rate, 12);
  auto plant = [&](Samples& into, const Samples& clip, double at_s) {
    for (size_t i = 0; i < clip.size(); ++i) {
      const auto j = static_cast<long long>(std::llround(at_s * rate)) + static_cast<long long>(i);
      if (j >= 0 && j < static_cast<long long>(into.size())) into[static_cast<size_t>(j)] = 0.8f * clip[i];
    }
  };
  plant(f1, a, 20);
  plant(f1, b, 84);  // into the second file
  plant(f2, b, -6);
  plant(f2, a, 40);
  REQUIRE(synth::write_audio(root + "/air/st-20260301T060000.wav", f1, 1, rate).empty());
  REQUIRE(synth::write_audio(root + "/air/st-20260301T060130.wav", f2, 1, rate).empty());

  PathGuard guard({root});
  RunnerConfig cfg;
  cfg.planner = Planner::estimate;
  cfg.inline_dir = root + "/inline";
  JobRunner runner(cfg, guard);
  auto prepared = runner.prepare({{"kind", "locate"},
                                  {"templates", {root + "/lib/alpha.wav", root + "/lib/beta.wav"}},
                                  {"recordings", {root + "/air/st-20260301T060000.wav", root + "/air/st-20260301T060130.wav"}}});
  REQUIRE_MESSAGE(prepared.ok(), prepared.error().describe());
  auto no_stop = [] { return false; };
  auto quiet = [](std::string_view) {};
  auto whole = runner.run(prepared.value(), [](double) {}, no_stop, quiet);
  REQUIRE(whole.ok());

  // One master per task, spans of 60 s: the run splits into 3 x 2 tasks.
  LocalTaskRunner here(runner);
  std::vector<double> progress;
  auto tasks = run_planned(runner, here, PlanOptions{1, 60}, "j1", prepared.value(),
                           [&](double f) { progress.push_back(f); }, no_stop, quiet);
  REQUIRE_MESSAGE(tasks.ok(), tasks.error().describe());
  CHECK(tasks.value()["tasks"] == 6);
  CHECK(progress.back() == 1.0);
  const auto& x = whole.value()["matches"];
  const auto& y = tasks.value()["matches"];
  REQUIRE(x.size() == 3);  // alpha twice, beta once across the two files
  REQUIRE(y.size() == x.size());
  for (size_t i = 0; i < x.size(); ++i) {
    CAPTURE(i);
    CHECK(y[i]["template"] == x[i]["template"]);
    CHECK(y[i]["recording"] == x[i]["recording"]);
    CHECK(std::fabs(y[i]["offset_s"].get<double>() - x[i]["offset_s"].get<double>()) < 1e-5);
    CHECK(std::fabs(y[i]["score"].get<double>() - x[i]["score"].get<double>()) < 1e-3);
  }
  // The straddling airing: in the first file, at its first sample.
  CHECK(y[1]["recording"].get<std::string>().find("T060000") != std::string::npos);
  CHECK(std::fabs(y[1]["offset_s"].get<double>() - 84) < 1e-3);
  CHECK(tasks.value()["recordings"] == whole.value()["recordings"]);

  // Cancelled before the first task: cancelled, nothing run.
  auto stopped = run_planned(runner, here, PlanOptions{1, 60}, "j2", prepared.value(), [](double) {},
                             [] { return true; }, quiet);
  REQUIRE_FALSE(stopped.ok());
  CHECK(stopped.error().code == ErrorCode::cancelled);
}
