#include "godwit/core/error.h"

#include <cstdio>

namespace godwit {
namespace {

struct CodeRow {
  ErrorCode code;
  std::string_view wire;
};

// The one table of the engine's wire names (the daemon's own codes are
// named in server/common/wire_code.cc).
constexpr CodeRow kRows[] = {
    {ErrorCode::usage, "usage"},
    {ErrorCode::not_found, "not_found"},
    {ErrorCode::unreadable, "unreadable"},
    {ErrorCode::unsupported, "unsupported"},
    {ErrorCode::empty, "empty"},
    {ErrorCode::corrupt, "corrupt"},
    {ErrorCode::io, "io"},
    {ErrorCode::cancelled, "cancelled"},
    {ErrorCode::invalid_template, "invalid_template"},
    {ErrorCode::no_placements, "no_placements"},
    {ErrorCode::internal, "internal"},
};

const CodeRow& row(ErrorCode code) {
  for (const auto& r : kRows)
    if (r.code == code) return r;
  return kRows[sizeof(kRows) / sizeof(kRows[0]) - 1];
}

}  // namespace

std::string_view wire_name(ErrorCode code) { return row(code).wire; }

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
