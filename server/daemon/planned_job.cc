#include "planned_job.h"

#include "godwit/compliance/timeline_locate.h"
#include "godwit/report/locate_report.h"
#include "planned_search.h"
#include "wire_code.h"

namespace godwit {
namespace {

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

}  // namespace

Result<std::vector<nlohmann::json>> LocalTaskRunner::run(const std::string& /*job_id*/,
                                                         const std::vector<PlannedTask>& tasks,
                                                         const std::function<void(double)>& progress,
                                                         const std::function<bool()>& should_stop,
                                                         const std::function<void(std::string_view)>& warn) {
  std::vector<nlohmann::json> results;
  for (size_t i = 0; i < tasks.size(); ++i) {
    if (should_stop()) return Error{ErrorCode::cancelled, "cancelled", "", std::nullopt};
    auto r = runner_.run(tasks[i].spec, [](double) {}, should_stop, warn);
    if (!r) return r.error();
    counts_.searched += tasks[i].spec.value("templates", nlohmann::json::array()).size();
    results.push_back(std::move(r.value()));
    progress(static_cast<double>(i + 1) / static_cast<double>(tasks.size()));
  }
  return results;
}

Result<nlohmann::json> run_planned(const JobRunner& runner, TaskRunner& tasks_runner, const PlanOptions& plan,
                                   const std::string& job_id, const nlohmann::json& spec,
                                   const std::function<void(double)>& progress,
                                   const std::function<bool()>& should_stop,
                                   const std::function<void(std::string_view)>& warn, const ReportFiles* report) {
  auto typed = job_spec_from_json(spec);
  if (!typed) return typed.error();
  const auto* rspec = std::get_if<ReconcileSpec>(&typed.value());
  const auto* lspec = std::get_if<LocateSpec>(&typed.value());
  if (!rspec && !lspec) return Error{ProtocolCode::bad_request, "only locate and reconcile jobs run as tasks", "", std::nullopt};
  const bool reconcile = rspec != nullptr;
  SegmentSpec base;  // what every task carries
  const SearchFields& stated = reconcile ? rspec->search : lspec->search;
  base.search.max_speed_change_pct = stated.max_speed_change_pct;
  base.search.max_tempo_change_pct = stated.max_tempo_change_pct;
  base.evidence = true;  // tasks verify their detections (and, for reconcile, measure loudness)
  std::vector<Stream> streams;
  std::vector<std::string> templates;
  std::optional<JobRunner::Reconcile> rec;
  ReconcilePlan rplan;
  LocateOptions lo;
  LocatePlan lplan;
  if (reconcile) {
    auto r = runner.load_reconcile(*rspec, warn);
    if (!r) return r.error();
    rec = std::move(r.value());
    rplan = plan_reconcile(rec->job, rec->options);
    add_run_streams(rplan, streams);
    templates = rec->job.masters;
  } else {
    base.search = lspec->search;
    // The same plan as a local locate job (timeline_locate.h): runs of
    // consecutive files as streams, files not readable whole alone; the
    // tasks confirm their detections beside the audio.
    templates = lspec->templates;
    lo = runner.locate_options(lspec->search, warn);
    lplan = plan_locate({templates, lspec->recordings}, lo, {});
    for (const auto& a : lplan.alone) streams.push_back(recording_stream(a.path, plan.span_s));
    add_run_streams(lplan.plan, streams);
  }
  // A reconcile job's finish (verification, loudness) follows the tasks.
  const double share = reconcile ? 0.95 : 1.0;
  ReconcileOptions evidence_options;
  if (reconcile) evidence_options = rec->options;
  else evidence_options.locate = lo;
  auto found = search_by_tasks(tasks_runner, job_id, base, streams, templates, plan, evidence_options,
                               [&](double f) { progress(share * f); }, should_stop, warn);
  if (!found) return found.error();
  const auto& tasks = found.value().tasks;
  LocateResult& search = found.value().search;
  std::vector<std::optional<DetectionEvidence>>& evidence = found.value().evidence;
  auto forget = [&] { tasks_runner.finished(job_id, tasks); };
  if (!reconcile) {
    lo.should_stop = should_stop;
    auto r = finish_locate(lplan, std::move(search), lo, {}, std::move(evidence));
    if (!r) return r.error();
    nlohmann::json out = locate_to_json(r.value());
    out["tasks"] = tasks.size();
    out["searches"] = tasks_runner.counts().to_json();
    forget();
    return out;
  }
  ReconcileOptions& ro = rec->options;
  ro.locate.should_stop = should_stop;
  tasks_runner.ask_families(ro);
  auto r = finish_reconcile(rec->job, std::move(rplan), std::move(search), ro, std::move(evidence));
  if (!r) return r.error();
  auto documents = runner.reconcile_documents(r.value(), *rspec, ro, rec->title, report, should_stop, warn, job_id);
  if (!documents) return documents.error();
  nlohmann::json out = std::move(documents.value());
  out["tasks"] = tasks.size();
  out["searches"] = tasks_runner.counts().to_json();
  forget();
  return out;
}

}  // namespace godwit
