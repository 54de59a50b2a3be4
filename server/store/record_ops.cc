#include "record_ops.h"

#include "reconcile_record.h"
#include "record_requests.h"
#include "stored_tasks.h"
#include "wire_code.h"

namespace godwit {

void attach_record(RecordStore& store, Dispatcher& dispatcher) {
  dispatcher.add_op("airings", [&store](const nlohmann::json& req) { return airings_op(store, req); });
  dispatcher.add_op("proof", [&store](const nlohmann::json& req) { return proof_op(store, req); });
}

void attach_record_unavailable(const Error& why, Dispatcher& dispatcher) {
  for (const char* op : {"airings", "proof"})
    dispatcher.add_op(op, [why](const nlohmann::json&) -> Result<nlohmann::json> {
      return Error{ProtocolCode::unavailable, "the store of record is unavailable: " + why.describe(), "", std::nullopt};
    });
}

JobExecutor stored_executor(RecordStore& store, const JobRunner& runner, PlanOptions plan, TaskRunnerMaker searcher,
                            JobExecutor otherwise) {
  if (!otherwise) otherwise = local_executor(runner);
  if (!searcher) searcher = [&runner] { return std::make_unique<LocalTaskRunner>(runner); };
  plan.at_files = true;
  return [&store, &runner, plan, searcher, otherwise](
             const std::string& id, const nlohmann::json& spec, const std::function<void(double)>& progress,
             const std::function<bool()>& should_stop, const std::function<void(std::string_view)>& warn,
             const ReportFiles* report) -> Result<nlohmann::json> {
    auto typed = job_spec_from_json(spec);
    if (!typed) return typed.error();
    const auto* rs = std::get_if<ReconcileSpec>(&typed.value());
    const auto* ls = std::get_if<LocateSpec>(&typed.value());
    if (!rs && !ls) return otherwise(id, spec, progress, should_stop, warn, report);
    const SearchFields& fields = rs ? rs->search : ls->search;
    std::unique_ptr<TaskRunner> inner = searcher();
    StoredTaskRunner kept(store, *inner, search_fingerprint(runner.locate_options(fields, warn)));
    return run_planned(runner, kept, plan, id, spec, progress, should_stop, warn, report);
  };
}

void attach_record(RecordStore& store, RunnerConfig& runner) {
  runner.on_reconciled = [&store, zone = runner.time_zone](const ReconcileResult& r, const ReconcileOptions& options,
                                                          const nlohmann::json& spec, const std::string& job_id) -> Status {
    RecordContext c;
    c.source = "daemon";
    // The daemon's job id ("drop-day-2026-03-14" for the drop folder's
    // day, run again as hours arrive), made unique per run.
    if (!job_id.empty()) c.key = job_id + "@" + make_job_key("run");
    c.time_zone = spec.value("time_zone", zone);
    c.station = spec.value("station", "");  // a configured station's (job_spec.h); else from the file names
    c.schedule = spec.value("schedule", "");
    return record_reconcile(store, r, options, c);
  };
}

}  // namespace godwit
