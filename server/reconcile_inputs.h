// Reading a reconcile job's inputs from files: the library (and its
// sidecar metadata), the planned log, the recordings. Shared by the command
// line and the daemon. Warnings (bad log rows, bad sidecars) are appended
// to `warnings` for the caller to show.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "godwit/reconcile_job.h"

namespace godwit {

struct ReconcileInputs {
  std::string library;
  std::string schedule;
  std::vector<std::string> recordings;
  double window_s = 60;
  std::string start;  // ISO 8601, only with a single recording
};

Result<ReconcileJob> load_reconcile_job(const ReconcileInputs& in, std::vector<std::string>& warnings);

}  // namespace godwit
