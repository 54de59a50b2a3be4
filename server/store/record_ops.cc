#include "record_ops.h"

#include "reconcile_record.h"
#include "record_requests.h"

namespace godwit {

void attach_record(RecordStore& store, Dispatcher& dispatcher) {
  dispatcher.add_op("airings", [&store](const nlohmann::json& req) { return airings_op(store, req); });
  dispatcher.add_op("proof", [&store](const nlohmann::json& req) { return proof_op(store, req); });
}

void attach_record_unavailable(const Error& why, Dispatcher& dispatcher) {
  for (const char* op : {"airings", "proof"})
    dispatcher.add_op(op, [why](const nlohmann::json&) -> Result<nlohmann::json> {
      return Error{ErrorCode::unavailable, "the store of record is unavailable: " + why.describe(), "", std::nullopt};
    });
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
