#include "reconcile_inputs.h"

#include <filesystem>
#include <fstream>
#include <sstream>

#include "library_scan.h"
#include "spot_metadata.h"

namespace godwit {

Result<ReconcileJob> load_reconcile_job(const ReconcileInputs& in, std::vector<std::string>& warnings) {
  ReconcileJob job;
  PlannedLogOptions log_options;
  log_options.default_window_s = in.window_s;
  log_options.zone_setting = in.zone_setting;
  if (!in.time_zone.empty()) {  // before anything is read: a wrong name stops the whole run
    auto zone = TimeZone::find(in.time_zone);
    if (!zone) return zone.error();
    log_options.zone = zone.value();
  }
  auto masters = scan_library(in.library);
  if (!masters) return masters.error();
  job.masters = masters.value();
  job.meta = load_spot_metadata(job.masters, warnings);

  std::error_code ec;
  if (std::filesystem::exists(in.schedule, ec) && !std::filesystem::is_regular_file(in.schedule, ec))
    return Error{ErrorCode::unreadable, "the planned log is not a regular file (a pipe?)", in.schedule, std::nullopt};
  std::ifstream f(in.schedule, std::ios::binary);
  if (!f) return Error{ErrorCode::not_found, "cannot open the planned log", in.schedule, std::nullopt};
  std::ostringstream text;
  text << f.rdbuf();
  auto log = parse_planned_log(text.str(), log_options);
  if (!log) {
    Error e = log.error();
    e.path = in.schedule;
    return e;
  }
  job.log = std::move(log.value());
  for (const auto& p : job.log.problems)
    warnings.push_back(in.schedule + ":" + std::to_string(p.line) + ": " + p.reason + " (row skipped)");
  if (auto st = require_placements(job.log); !st) {
    Error e = st.error();
    e.path = in.schedule;
    return e;
  }

  if (!in.start.empty() && in.recordings.size() != 1)
    return Error{ErrorCode::usage, "a start time applies to a single recording; name files with their start time", "",
                 std::nullopt};
  for (const auto& r : in.recordings) {
    RecordingInput ri{r, std::nullopt};
    if (!in.start.empty()) {
      ri.start_s = parse_iso8601_local(in.start);
      if (!ri.start_s) return Error{ErrorCode::usage, "the start is not an ISO 8601 local date-time", "", std::nullopt};
    }
    job.recordings.push_back(ri);
  }
  if (job.recordings.empty()) return Error{ErrorCode::usage, "no recordings given", "", std::nullopt};
  return job;
}

}  // namespace godwit
