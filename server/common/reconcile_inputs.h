// Reading a reconcile job's inputs from files: the library (and its
// sidecar metadata), the planned log, the recordings. Shared by the command
// line and the daemon. Warnings (bad log rows, bad sidecars) are appended
// to `warnings` for the caller to show. A planned log without a single
// valid row is an error (no_placements), after its rows' warnings.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "godwit/compliance/reconcile_job.h"

namespace godwit {

struct ReconcileInputs {
  std::string library;
  std::string schedule;
  std::vector<std::string> recordings;
  double window_s = 60;
  std::string start;  // ISO 8601, only with a single recording
  // The station's IANA time zone, for planned times written with a UTC
  // offset; empty: none (such rows are rejected). An unknown name is a
  // usage error, found before anything is read.
  std::string time_zone;
  // How the reader of a rejected row sets the zone ("--time-zone").
  std::string zone_setting = "--time-zone";
};

Result<ReconcileJob> load_reconcile_job(const ReconcileInputs& in, std::vector<std::string>& warnings);

}  // namespace godwit
