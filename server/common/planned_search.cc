#include "planned_search.h"

#include <algorithm>

namespace godwit {

void add_run_streams(const ReconcilePlan& plan, std::vector<Stream>& streams) {
  const Timeline& timeline = plan.timeline;
  for (size_t i = 0; i < timeline.runs.size(); ++i)
    streams.push_back({plan.streams.name(RunId{i}), run_parts(timeline, i), timeline.runs[i].files.front().native_rate_hz,
                       timeline.runs[i].duration_s()});
}

Result<TaskSearch> search_by_tasks(TaskRunner& runner, const std::string& job_id, const SegmentSpec& base_in,
                                   const std::vector<Stream>& streams, const std::vector<std::string>& templates,
                                   const PlanOptions& plan, const ReconcileOptions& evidence_options,
                                   const std::function<void(double)>& progress,
                                   const std::function<bool()>& should_stop,
                                   const std::function<void(std::string_view)>& warn) {
  SegmentSpec base = base_in;
  const bool after = runner.evidence_after();
  if (after) base.evidence = false;  // the runner gathers it (and may keep it)
  TaskSearch out;
  out.tasks =
      plan_tasks(job_id, base, streams, templates,
                 segment_margin_s(templates, std::max(base.search.max_speed_change_pct, base.search.max_tempo_change_pct)),
                 plan);
  auto results = runner.run(job_id, out.tasks, progress, should_stop, warn);
  if (!results) return results.error();
  auto merged = merge_results(streams, templates, out.tasks, results.value());
  if (!merged) return merged.error();
  out.search = std::move(merged.value().search);
  if (!after) {
    for (const auto& e : merged.value().evidence) {
      if (e.is_null()) {
        out.evidence.clear();
        break;
      }
      auto x = evidence_from_json(e);
      if (!x) return x.error();
      out.evidence.push_back(std::move(x.value()));
    }
    return out;
  }
  // Per stream, its matches' evidence over its files.
  for (const auto& s : streams)
    if (s.parts.empty()) return out;  // a file read alone: the finish gathers it
  out.evidence.resize(out.search.matches.size());
  std::vector<std::vector<size_t>> by_stream(streams.size());
  for (size_t i = 0; i < out.search.matches.size(); ++i) {
    const size_t s = out.search.matches[i].recording_id.index;  // the merge's: a place in `streams`
    if (s >= streams.size()) return Error{ErrorCode::internal, "a match of no stream", "", std::nullopt};
    by_stream[s].push_back(i);
  }
  for (size_t s = 0; s < streams.size(); ++s) {
    if (by_stream[s].empty()) continue;
    if (should_stop && should_stop()) return Error{ErrorCode::cancelled, "cancelled", "", std::nullopt};
    std::vector<Match> matches;
    for (size_t i : by_stream[s]) matches.push_back(out.search.matches[i]);
    auto ev = runner.evidence(out.search.templates, streams[s].parts, matches, evidence_options);
    if (ev.size() != matches.size()) return Error{ErrorCode::internal, "evidence for other matches", "", std::nullopt};
    for (size_t k = 0; k < matches.size(); ++k) out.evidence[by_stream[s][k]] = std::move(ev[k]);
  }
  return out;
}

Result<ReconcileResult> reconcile_by_tasks(const ReconcileJob& job, ReconcileOptions options, TaskRunner& runner,
                                           const PlanOptions& plan, const std::string& job_id,
                                           const std::function<void(double)>& progress,
                                           const std::function<bool()>& should_stop,
                                           const std::function<void(std::string_view)>& warn, size_t* tasks_out) {
  ReconcilePlan rplan = plan_reconcile(job, options);
  std::vector<Stream> streams;
  add_run_streams(rplan, streams);
  SegmentSpec base;
  base.search.max_speed_change_pct = 100 * options.locate.speed.max_deviation * (options.locate.speed.enabled ? 1 : 0);
  base.search.max_tempo_change_pct = 100 * options.locate.speed.max_tempo_deviation;
  base.evidence = true;
  auto found = search_by_tasks(runner, job_id, base, streams, job.masters, plan, options,
                               [&](double f) { if (progress) progress(0.95 * f); }, should_stop, warn);
  if (!found) return found.error();
  if (tasks_out) *tasks_out = found.value().tasks.size();
  options.locate.should_stop = should_stop;
  runner.ask_families(options);
  auto r = finish_reconcile(job, std::move(rplan), std::move(found.value().search), options,
                            std::move(found.value().evidence));
  runner.finished(job_id, found.value().tasks);
  return r;
}

}  // namespace godwit
