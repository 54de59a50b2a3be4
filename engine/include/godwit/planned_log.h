// The planned log: which spot should air when, and how far off it may be.
//
// CSV (RFC 4180 quoting), header `slot,spot,planned,window_s` in any order;
// `window_s` may be absent or empty (then the default applies). `planned`
// is an ISO 8601 local date-time (civil_time.h). A row that cannot be used
// is reported with its line number and the reason; the other rows still
// count.
//
// Thread contract: plain functions and values.
#pragma once

#include <string>
#include <string_view>
#include <vector>

#include "godwit/civil_time.h"
#include "godwit/error.h"

namespace godwit {

struct Placement {
  std::string slot;         // unique placement id
  std::string spot;         // spot id (master file stem)
  std::string planned;      // as written in the log
  LocalSeconds planned_s = 0;
  double window_s = 0;      // allowed deviation either way, >= 0
  size_t line = 0;          // 1-based line in the log
};

struct LogProblem {
  size_t line = 0;
  std::string reason;
};

struct PlannedLog {
  std::vector<Placement> placements;  // in file order
  std::vector<LogProblem> problems;
};

// Errors: usage when the header lacks slot, spot or planned (nothing can
// be read then). Everything else is a per-row problem.
Result<PlannedLog> parse_planned_log(std::string_view csv, double default_window_s);

// Splits one CSV record (no line break inside quotes is supported by the
// log format). Returns false on an unterminated quote.
bool split_csv_line(std::string_view line, std::vector<std::string>& fields);

}  // namespace godwit
