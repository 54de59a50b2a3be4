#include "wire_code.h"

#include <array>

#include "godwit/report/locate_report.h"

namespace godwit {
namespace {

struct ProtocolRow {
  ErrorCode code;
  std::string_view wire;
};

// The one table of the protocol codes' wire names (server/PROTOCOL.md,
// "Error codes"); the engine's codes are named by the engine's table.
constexpr ProtocolRow kProtocolRows[] = {
    {ProtocolCode::forbidden, "forbidden"},     {ProtocolCode::busy, "busy"},
    {ProtocolCode::unavailable, "unavailable"}, {ProtocolCode::unknown_job, "unknown_job"},
    {ProtocolCode::bad_request, "bad_request"}, {ProtocolCode::too_large, "too_large"},
};

constexpr size_t kEngineCodes = static_cast<size_t>(ErrorCode::internal) + 1;
constexpr size_t kProtocolCodes = sizeof(kProtocolRows) / sizeof(kProtocolRows[0]);

constexpr std::array<ErrorCode, kEngineCodes + kProtocolCodes> make_all() {
  std::array<ErrorCode, kEngineCodes + kProtocolCodes> all{};
  for (size_t i = 0; i < kEngineCodes; ++i) all[i] = static_cast<ErrorCode>(i);
  for (size_t i = 0; i < kProtocolCodes; ++i) all[kEngineCodes + i] = kProtocolRows[i].code;
  return all;
}
constexpr auto kAll = make_all();

bool is_engine_code(ErrorCode code) {
  const int c = static_cast<int>(code);
  return c >= 0 && c <= static_cast<int>(ErrorCode::internal);
}

}  // namespace

std::span<const ErrorCode> all_wire_codes() { return kAll; }

std::string_view wire_code_name(ErrorCode code) {
  if (is_engine_code(code)) return wire_name(code);
  for (const auto& r : kProtocolRows)
    if (r.code == code) return r.wire;
  return wire_name(ErrorCode::internal);
}

ErrorCode wire_code_from_name(std::string_view name) {
  for (const auto& r : kProtocolRows)
    if (r.wire == name) return r.code;
  return code_from_wire_name(name);
}

nlohmann::json wire_error_to_json(const Error& e) {
  nlohmann::json j = error_to_json(e);
  j["code"] = std::string(wire_code_name(e.code));
  return j;
}

}  // namespace godwit
