#include "task_runner.h"

#include "godwit/audio/master_library.h"
#include "godwit/report/locate_report.h"

namespace godwit {

Result<nlohmann::json> run_segment_spec(const SegmentSpec& spec, LocateOptions lo) {
  // The task's masters, decoded once for its search and its evidence (or
  // the job's, decoded once for all its tasks).
  if (!lo.masters) lo.masters = std::make_shared<MasterLibrary>(lo.opener, lo.analysis_rate_hz);
  auto r = search_segment(spec.segment, spec.templates, lo);
  if (!r) return r.error();
  nlohmann::json out = locate_to_json(r.value(), true);
  if (spec.evidence) {  // a reconcile job's: steps 4 and 6 here, beside the audio
    ReconcileOptions ro;
    ro.locate = lo;
    const auto ev = gather_evidence(r.value().templates, spec.segment.stream.parts, r.value().matches, ro);
    out["evidence"] = nlohmann::json::array();
    for (const auto& e : ev) out["evidence"].push_back(evidence_to_json(e));
  }
  return out;
}

Result<std::vector<nlohmann::json>> InProcessTaskRunner::run(const std::string& /*job_id*/,
                                                             const std::vector<PlannedTask>& tasks,
                                                             const std::function<void(double)>& progress,
                                                             const std::function<bool()>& should_stop,
                                                             const std::function<void(std::string_view)>& /*warn*/) {
  std::vector<nlohmann::json> results;
  LocateOptions lo = options_;
  lo.on_progress = nullptr;
  lo.should_stop = should_stop;
  for (size_t i = 0; i < tasks.size(); ++i) {
    if (should_stop && should_stop()) return Error{ErrorCode::cancelled, "cancelled", "", std::nullopt};
    auto spec = job_spec_from_json(tasks[i].spec);
    if (!spec) return spec.error();
    const auto* seg = std::get_if<SegmentSpec>(&spec.value());
    if (!seg) return Error{ErrorCode::internal, "a task that is not a segment", "", std::nullopt};
    auto r = run_segment_spec(*seg, lo);
    if (!r) return r.error();
    counts_.searched += seg->templates.size();
    results.push_back(std::move(r.value()));
    if (progress) progress(static_cast<double>(i + 1) / static_cast<double>(tasks.size()));
  }
  return results;
}

}  // namespace godwit
