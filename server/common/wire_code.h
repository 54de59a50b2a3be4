// The codes a daemon reply, a failed job or a command's error carries: the
// engine's own (ErrorCode, core/error.h) and, beside them, the daemon
// protocol's (ProtocolCode below), all carried in the same Error. This file
// holds the one table of the protocol codes' wire names; server/PROTOCOL.md
// documents them ("Error codes") and tests/server/common/wire_code_test.cc
// checks the two agree. Their exit codes are in exit_code.h's table.
//
// Thread contract: constants and pure functions.
#pragma once

#include <nlohmann/json.hpp>
#include <span>
#include <string_view>

#include "godwit/core/error.h"

namespace godwit {

// The daemon protocol's codes, numbered from the engine's
// kFirstProgramErrorCode (ErrorCode is open to them). The engine never
// produces one. Used as `Error{ProtocolCode::busy, ...}`.
struct ProtocolCode {
  static constexpr ErrorCode forbidden{kFirstProgramErrorCode};        // a path outside the roots, a missing or wrong token
  static constexpr ErrorCode busy{kFirstProgramErrorCode + 1};         // the queue or the connections are full: retry later
  static constexpr ErrorCode unavailable{kFirstProgramErrorCode + 2};  // shutting down, or cannot be reached (godwitd, Redis, the store)
  static constexpr ErrorCode unknown_job{kFirstProgramErrorCode + 3};  // no such job (or not in the state asked)
  static constexpr ErrorCode bad_request{kFirstProgramErrorCode + 4};  // malformed JSON, unknown op, missing or mistyped field
  static constexpr ErrorCode too_large{kFirstProgramErrorCode + 5};    // a request line, inline spot, job or answer over its limit
};

// Every code a reply may carry: the engine's (0 to ErrorCode::internal), then
// the protocol's, in the table's order.
std::span<const ErrorCode> all_wire_codes();
// The wire name of any of those codes; `internal`'s for a code of neither.
std::string_view wire_code_name(ErrorCode code);
// The code of a wire name, engine's or protocol's; `internal` for a name
// neither knows.
ErrorCode wire_code_from_name(std::string_view name);
// {"code", "message", "path"?, "offset_s"?}: the engine's error_to_json
// (report/locate_report.h) with the code named by wire_code_name.
nlohmann::json wire_error_to_json(const Error& e);

}  // namespace godwit
