// Fuzz target: the planned log's parser (planned_log.h), on any bytes, as
// the command line and the daemon read logs: without a time zone, and with
// the station's (Europe/Berlin, so times written with a UTC offset are
// converted, across its daylight-saving changes).
//
// Checked beyond crashes and sanitizer findings, against the header's
// contract: an error is `usage` (a header without slot, spot or planned,
// a field named twice, UTF-16); otherwise every placement has a non-empty,
// unique slot and a spot, a line after the header and within the text, a
// planned time that parse_iso8601_local reads back from its ISO text to
// within a microsecond, and a window from 0 to 86 400 s (the default when
// its field is empty); placements and problems are in line order and
// never share a line; require_placements fails exactly when there is no
// placement, with `no_placements`; without a zone no placement carries a
// UTC offset.
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <optional>
#include <set>
#include <string>

#include "godwit/compliance/planned_log.h"

using namespace godwit;

namespace {

[[noreturn]] void fail(const std::string& what) {
  std::fprintf(stderr, "planned_log_fuzz: %s\n", what.c_str());
  std::abort();
}

void check(std::string_view csv, const PlannedLogOptions& options) {
  const auto log = parse_planned_log(csv, options);
  if (!log) {
    if (log.error().code != ErrorCode::usage) fail("an error other than usage: " + log.error().describe());
    return;
  }
  size_t lines = 1;
  for (char ch : csv) lines += ch == '\n';
  std::set<std::string> slots;
  std::set<size_t> used_lines;
  size_t last = 0;
  for (const auto& p : log.value().placements) {
    if (p.slot.empty() || p.spot.empty()) fail("a placement without slot or spot");
    if (!slots.insert(p.slot).second) fail("slot " + p.slot + " twice");
    if (p.line <= log.value().header_line || p.line > lines) fail("a placement's line out of range");
    if (p.line <= last) fail("placements out of line order");
    last = p.line;
    used_lines.insert(p.line);
    const auto t = parse_iso8601_local(p.planned);
    if (!t || !(std::fabs(*t - p.planned_s) <= 1e-6)) fail("planned_s is not the planned text's time: " + p.planned);
    if (!(p.window_s >= 0 && p.window_s <= 86400)) fail("a window outside 0..86400 s");
    if (!options.zone && p.written_utc_offset_s) fail("a UTC offset accepted without a zone");
  }
  last = 0;
  for (const auto& pr : log.value().problems) {
    if (pr.line < 1 || pr.line > lines) fail("a problem's line out of range");
    if (pr.line <= last) fail("problems out of line order");
    last = pr.line;
    if (pr.reason.empty()) fail("a problem without a reason");
    if (used_lines.count(pr.line)) fail("a line both a placement and a problem");
  }
  const Status need = require_placements(log.value());
  if (need.ok() == log.value().placements.empty()) fail("require_placements disagrees with the placements");
  if (!need.ok() && need.error().code != ErrorCode::no_placements) fail("require_placements failed without no_placements");
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  static const PlannedLogOptions plain{};
  static const PlannedLogOptions berlin = [] {
    PlannedLogOptions o;
    auto zone = TimeZone::find("Europe/Berlin");
    if (!zone) fail("no Europe/Berlin: " + zone.error().describe());
    o.zone = zone.value();
    return o;
  }();
  const std::string_view csv(reinterpret_cast<const char*>(data), size);
  check(csv, plain);
  check(csv, berlin);
  return 0;
}
