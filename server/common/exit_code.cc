#include "exit_code.h"

namespace godwit {
namespace {

struct ErrorExit {
  ErrorCode error;
  ExitCode exit;
};

// The one table from error codes (the engine's and the protocol's,
// wire_code.h) to exit codes. README.md ("Exit codes") documents the exit
// codes; change both together.
constexpr ErrorExit kErrorExits[] = {
    {ErrorCode::usage, ExitCode::usage},
    {ErrorCode::not_found, ExitCode::unreadable_input},
    {ErrorCode::unreadable, ExitCode::unreadable_input},
    {ErrorCode::unsupported, ExitCode::unreadable_input},
    {ErrorCode::empty, ExitCode::unreadable_input},
    {ErrorCode::corrupt, ExitCode::unreadable_input},
    {ErrorCode::io, ExitCode::io},
    {ErrorCode::cancelled, ExitCode::interrupted},
    {ErrorCode::invalid_template, ExitCode::unreadable_input},
    {ProtocolCode::forbidden, ExitCode::refused},
    {ProtocolCode::busy, ExitCode::daemon_unavailable},
    {ProtocolCode::unavailable, ExitCode::daemon_unavailable},
    {ProtocolCode::unknown_job, ExitCode::refused},
    {ProtocolCode::bad_request, ExitCode::refused},
    {ProtocolCode::too_large, ExitCode::refused},
    {ErrorCode::no_placements, ExitCode::no_placements},
    {ErrorCode::internal, ExitCode::internal},
};

constexpr ExitCode kAll[] = {ExitCode::done,          ExitCode::usage,
                             ExitCode::unreadable_input, ExitCode::partial,
                             ExitCode::io,        ExitCode::refused,
                             ExitCode::daemon_unavailable, ExitCode::no_placements,
                             ExitCode::mostly_not_recorded, ExitCode::internal,
                             ExitCode::interrupted};

}  // namespace

int exit_status(ExitCode code) { return static_cast<int>(code); }

ExitCode exit_code_for(ErrorCode code) {
  for (const auto& r : kErrorExits)
    if (r.error == code) return r.exit;
  return ExitCode::internal;
}

ExitCode exit_code_for_reply(ErrorCode code) {
  const ExitCode e = exit_code_for(code);
  return e == ExitCode::daemon_unavailable ? e : ExitCode::refused;
}

std::span<const ExitCode> all_exit_codes() { return kAll; }

}  // namespace godwit
