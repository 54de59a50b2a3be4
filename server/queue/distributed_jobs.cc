#include "distributed_jobs.h"

#include <chrono>
#include <set>
#include <thread>

#include "godwit/report/html_report.h"
#include "godwit/report/locate_report.h"
#include "godwit/compliance/timeline_locate.h"
#include "godwit/report/reconcile_report.h"

namespace godwit {
namespace {

// What a segment reads beyond what it owns: the longest airing (the
// longest master at the lowest speed searched) plus the reach of the noise
// floor (about 4.4 s each side) and of peak suppression, with room.
double margin_for(const std::vector<std::string>& templates, double max_speed_change_pct) {
  double longest_s = 0;
  for (const auto& t : templates) {
    auto src = open_audio_file(t);
    // A master whose length is not stated: assume a long one.
    const double d = src ? src.value()->info().duration_s().value_or(300.0) : 0.0;
    longest_s = std::max(longest_s, d);
  }
  return longest_s / (1 - std::min(max_speed_change_pct, 50.0) / 100) + 12;
}

// A locate job's recording as a stream: split only when it is long and
// states its length (whole otherwise, exactly as one process reads it).
Stream recording_stream(const std::string& path, double span_s) {
  Stream s{path, {}, 0, 0};
  auto src = open_audio_file(path);
  if (!src) return s;
  const auto& info = src.value()->info();
  if (!info.native_frames || !(info.native_rate_hz > 0)) return s;
  s.rate_hz = info.native_rate_hz;
  s.duration_s = static_cast<double>(*info.native_frames) / info.native_rate_hz;
  if (s.duration_s > 1.5 * span_s) s.parts = {{path, *info.native_frames, 0}};
  return s;
}

// Every run of a timeline as a stream, at its first file's rate (the rate
// ConcatSource reads it at; later files may have others).
void add_runs(const Timeline& timeline, std::vector<Stream>& streams) {
  for (size_t i = 0; i < timeline.runs.size(); ++i)
    streams.push_back({run_name(i), run_parts(timeline, i), timeline.runs[i].files.front().native_rate_hz,
                       timeline.runs[i].duration_s()});
}

}  // namespace

DistributedJobs::DistributedJobs(QueueUrl url, QueueOptions options, PlanOptions plan, const JobRunner& runner)
    : url_(std::move(url)), options_(options), plan_(plan), runner_(runner) {}

Result<nlohmann::json> DistributedJobs::cluster() const {
  TaskQueue q(url_, default_consumer_name(), options_);
  return q.cluster();
}

Result<nlohmann::json> DistributedJobs::run(const std::string& job_id, const nlohmann::json& spec,
                                            const std::function<void(double)>& progress,
                                            const std::function<bool()>& should_stop,
                                            const std::function<void(std::string_view)>& warn,
                                            const ReportFiles* report) const {
  const bool reconcile = spec.value("kind", "") == "reconcile";
  const double speed_pct = spec.value("max_speed_change_pct", 4.5);
  nlohmann::json base{{"max_speed_change_pct", speed_pct}};
  if (reconcile) base["evidence"] = true;  // tasks verify their detections and measure loudness
  std::vector<Stream> streams;
  std::vector<std::string> templates;
  std::optional<JobRunner::Reconcile> rec;
  ReconcilePlan plan;
  LocateOptions lo;
  LocatePlan lplan;
  if (reconcile) {
    auto r = runner_.load_reconcile(spec, warn);
    if (!r) return r.error();
    rec = std::move(r.value());
    plan = plan_reconcile(rec->job, rec->options);
    add_runs(plan.timeline, streams);
    templates = rec->job.masters;
  } else {
    for (const char* field : {"threshold", "floor_k", "fft_size"})
      if (spec.contains(field)) base[field] = spec[field];
    // The same plan as a local locate job (timeline_locate.h): runs of
    // consecutive files as streams, files not readable whole alone; the
    // tasks confirm their detections beside the audio.
    templates = spec.at("templates").get<std::vector<std::string>>();
    lo = runner_.locate_options(spec, warn);
    lplan = plan_locate({templates, spec.at("recordings").get<std::vector<std::string>>()}, lo, {});
    for (const auto& a : lplan.alone) streams.push_back(recording_stream(a, plan_.span_s));
    add_runs(lplan.plan.timeline, streams);
    base["evidence"] = true;
  }
  const auto tasks = plan_tasks(job_id, base, streams, templates, margin_for(templates, speed_pct), plan_);
  // A reconcile job's finish (verification, loudness) follows the tasks.
  const double share = reconcile ? 0.95 : 1.0;
  auto results = run_tasks(job_id, tasks, [&](double f) { progress(share * f); }, should_stop, warn);
  if (!results) return results.error();
  auto merged = merge_results(streams, templates, tasks, results.value());
  if (!merged) return merged.error();
  LocateResult& search = merged.value().search;
  // Best effort, once the job's result exists: leftovers expire with nothing.
  auto forget = [&] { (void)TaskQueue(url_, default_consumer_name() + "/submit", options_).forget(job_id, tasks); };
  // The evidence the tasks gathered; gathered here should any task have
  // given none.
  std::vector<std::optional<DetectionEvidence>> evidence;
  for (const auto& e : merged.value().evidence) {
    if (e.is_null()) {
      evidence.clear();
      break;
    }
    auto x = evidence_from_json(e);
    if (!x) return x.error();
    evidence.push_back(std::move(x.value()));
  }
  if (!reconcile) {
    lo.should_stop = should_stop;
    auto r = finish_locate(lplan, std::move(search), lo, {}, std::move(evidence));
    if (!r) return r.error();
    nlohmann::json out = locate_to_json(r.value());
    out["tasks"] = tasks.size();
    forget();
    return out;
  }
  ReconcileOptions& ro = rec->options;
  ro.locate.should_stop = should_stop;
  auto r = finish_reconcile(rec->job, std::move(plan), std::move(search), ro, std::move(evidence));
  if (!r) return r.error();
  auto documents = runner_.reconcile_documents(r.value(), spec, ro, rec->title, report, should_stop, warn, job_id);
  if (!documents) return documents.error();
  nlohmann::json out = std::move(documents.value());
  out["tasks"] = tasks.size();
  forget();
  return out;
}

Result<std::vector<nlohmann::json>> DistributedJobs::run_tasks(const std::string& job_id,
                                                               const std::vector<PlannedTask>& tasks,
                                                               const std::function<void(double)>& progress,
                                                               const std::function<bool()>& should_stop,
                                                               const std::function<void(std::string_view)>& warn) const {
  std::vector<nlohmann::json> results;
  if (tasks.empty()) return results;
  TaskQueue q(url_, default_consumer_name() + "/submit", options_);
  std::set<std::string> ids;
  for (const auto& t : tasks) ids.insert(t.id);
  auto last_warning = std::chrono::steady_clock::now() - std::chrono::hours(1);
  auto waiting = [&](const Error& e) {
    if (std::chrono::steady_clock::now() - last_warning > std::chrono::seconds(10)) {
      warn("waiting for the queue: " + e.message);
      last_warning = std::chrono::steady_clock::now();
    }
    std::this_thread::sleep_for(std::chrono::seconds(1));
  };
  // Enqueue (again, after a restart: stored tasks are skipped).
  for (;;) {
    if (should_stop()) return Error{ErrorCode::cancelled, "cancelled", "", std::nullopt};
    auto st = q.ensure_group();
    if (st) st = q.enqueue(job_id, tasks);
    if (st) break;
    waiting(st.error());
  }
  for (;;) {
    if (should_stop()) {
      // Workers skip the job's tasks from now on, and stop a running one
      // within seconds. With Redis down they run them to the end, unseen.
      if (auto st = q.cancel(job_id); !st) warn("cancel not passed on to the workers: " + st.error().message);
      return Error{ErrorCode::cancelled, "cancelled", "", std::nullopt};
    }
    auto failed = q.failures(job_id);
    if (!failed) {
      waiting(failed.error());
      continue;
    }
    for (const auto& [task, reason] : failed.value())
      if (ids.count(task))  // not a task of an earlier plan under this id
        return Error{ErrorCode::internal,
                     "task " + task + " failed " + std::to_string(options_.max_attempts) + " times: " + reason, "",
                     std::nullopt};
    auto n = q.stored_count(job_id, tasks);
    if (!n) {
      waiting(n.error());
      continue;
    }
    progress(static_cast<double>(n.value()) / static_cast<double>(tasks.size()));
    if (n.value() >= tasks.size()) break;
    std::this_thread::sleep_for(std::chrono::milliseconds(200));
  }
  for (const auto& t : tasks) {
    for (;;) {
      auto r = q.result(t.id);
      if (r && r.value()) {
        results.push_back(std::move(*r.value()));
        break;
      }
      if (!r) waiting(r.error());
      else return Error{ErrorCode::internal, "task " + t.id + " counted as stored but has no result", "", std::nullopt};
    }
  }
  return results;
}

}  // namespace godwit
