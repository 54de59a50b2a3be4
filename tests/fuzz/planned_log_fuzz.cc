// Fuzz target: the planned log's parser (planned_log.h), on any bytes.
//
// Checked beyond crashes and sanitizer findings, against the header's
// contract: a log without the slot, spot and planned columns is a `usage`
// error and bytes without a header `empty`; otherwise every placement has
// a non-empty, unique slot and a spot, a line number within the text, a
// planned time that parse_iso8601_local gives again from its text, and a
// finite window >= 0 (the default when its field is empty); placements
// and problems are in line order and never share a line.
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <set>
#include <string>

#include "godwit/planned_log.h"

using namespace godwit;

namespace {

[[noreturn]] void fail(const std::string& what) {
  std::fprintf(stderr, "planned_log_fuzz: %s\n", what.c_str());
  std::abort();
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  const std::string_view csv(reinterpret_cast<const char*>(data), size);
  constexpr double kDefaultWindowS = 60;
  const auto log = parse_planned_log(csv, kDefaultWindowS);
  if (!log) {
    const ErrorCode c = log.error().code;
    if (c != ErrorCode::usage && c != ErrorCode::empty) fail("an error other than usage or empty");
    return 0;
  }
  size_t lines = 1;
  for (char ch : csv) lines += ch == '\n';
  std::set<std::string> slots;
  std::set<size_t> used_lines;
  size_t last = 0;
  for (const auto& p : log.value().placements) {
    if (p.slot.empty() || p.spot.empty()) fail("a placement without slot or spot");
    if (!slots.insert(p.slot).second) fail("slot " + p.slot + " twice");
    if (p.line < 2 || p.line > lines) fail("a placement's line out of range");
    if (p.line <= last) fail("placements out of line order");
    last = p.line;
    used_lines.insert(p.line);
    const auto t = parse_iso8601_local(p.planned);
    if (!t || *t != p.planned_s) fail("planned_s is not the planned text's time: " + p.planned);
    if (!std::isfinite(p.window_s) || p.window_s < 0) fail("a window that is not finite and >= 0");
  }
  last = 0;
  for (const auto& pr : log.value().problems) {
    if (pr.line < 1 || pr.line > lines) fail("a problem's line out of range");
    if (pr.line <= last) fail("problems out of line order");
    last = pr.line;
    if (pr.reason.empty()) fail("a problem without a reason");
    if (used_lines.count(pr.line)) fail("a line both a placement and a problem");
  }
  return 0;
}
