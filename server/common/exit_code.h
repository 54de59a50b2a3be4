// The exit codes of godwit and godwitd: one table (exit_code.cc), which
// README.md ("Exit codes") documents; tests/server/common/exit_code_test.cc
// checks the two agree. The engine knows nothing of processes: its errors,
// and the protocol's (wire_code.h), map here by their code.
#pragma once

#include <span>

#include "godwit/core/error.h"
#include "wire_code.h"

namespace godwit {

enum class ExitCode : int {
  done = 0,
  usage = 2,                 // bad option or argument, unusable input named on the command line
  unreadable_input = 3,      // a master could not be read, or no recording at all
  partial = 4,               // done, but a recording failed or broke part way
  io = 5,                    // the output (godwit) or the state folder or socket (godwitd) failed; nothing half-written is left
  refused = 6,               // godwitd refused the request (bad_request, forbidden, unknown_job, too_large)
  daemon_unavailable = 7,    // godwitd could not be reached, is shutting down or busy
  no_placements = 8,         // reconcile: the planned log has no valid row
  mostly_not_recorded = 9,   // reconcile: over half the placements outside the recorded time
  internal = 70,             // a bug
  interrupted = 130,         // SIGINT/SIGTERM, or the job was cancelled
};

// The process exit status for `code`.
int exit_status(ExitCode code);
// The exit code of a run that failed with an engine or protocol error
// (any of all_wire_codes()).
ExitCode exit_code_for(ErrorCode code);
// The exit code of a request godwitd answered with an error of `code`:
// `refused`, unless the table says the daemon is unavailable (busy,
// unavailable).
ExitCode exit_code_for_reply(ErrorCode code);
// Every exit code, in the table's order.
std::span<const ExitCode> all_exit_codes();

}  // namespace godwit
