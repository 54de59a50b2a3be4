#include "godwit/core/error.h"

#include <cstdio>

namespace godwit {
namespace {

struct CodeRow {
  ErrorCode code;
  std::string_view wire;
  int exit;
};

// The one table: wire names and exit codes. Exit codes are documented in
// README.md ("Exit codes"); change both together.
constexpr CodeRow kRows[] = {
    {ErrorCode::usage, "usage", 2},
    {ErrorCode::not_found, "not_found", 3},
    {ErrorCode::unreadable, "unreadable", 3},
    {ErrorCode::unsupported, "unsupported", 3},
    {ErrorCode::empty, "empty", 3},
    {ErrorCode::corrupt, "corrupt", 3},
    {ErrorCode::io, "io", 5},
    {ErrorCode::cancelled, "cancelled", 130},
    {ErrorCode::invalid_template, "invalid_template", 3},
    {ErrorCode::forbidden, "forbidden", 6},
    {ErrorCode::busy, "busy", 7},
    {ErrorCode::unavailable, "unavailable", 7},
    {ErrorCode::not_found_job, "unknown_job", 6},
    {ErrorCode::bad_request, "bad_request", 6},
    {ErrorCode::too_large, "too_large", 6},
    {ErrorCode::no_placements, "no_placements", 8},
    {ErrorCode::internal, "internal", 70},
};

const CodeRow& row(ErrorCode code) {
  for (const auto& r : kRows)
    if (r.code == code) return r;
  return kRows[sizeof(kRows) / sizeof(kRows[0]) - 1];
}

}  // namespace

std::string_view wire_name(ErrorCode code) { return row(code).wire; }
int exit_code(ErrorCode code) { return row(code).exit; }

ErrorCode code_from_wire_name(std::string_view name) {
  for (const auto& r : kRows)
    if (r.wire == name) return r.code;
  return ErrorCode::internal;
}

std::string Error::describe() const {
  std::string s;
  if (!path.empty()) s += path + ": ";
  s += message;
  if (offset_s) {
    char buf[64];
    std::snprintf(buf, sizeof buf, " (at %.3f s)", *offset_s);
    s += buf;
  }
  return s;
}

}  // namespace godwit
