#include "godwit/planned_log.h"

#include <charconv>
#include <cmath>
#include <map>
#include <set>

namespace godwit {
namespace {

std::string trim(std::string s) {
  const auto a = s.find_first_not_of(" \t\r\n");
  if (a == std::string::npos) return {};
  const auto b = s.find_last_not_of(" \t\r\n");
  return s.substr(a, b - a + 1);
}

}  // namespace

bool split_csv_line(std::string_view line, std::vector<std::string>& fields) {
  fields.clear();
  std::string cur;
  bool quoted = false;
  for (size_t i = 0; i < line.size(); ++i) {
    const char c = line[i];
    if (quoted) {
      if (c == '"') {
        if (i + 1 < line.size() && line[i + 1] == '"') {
          cur += '"';
          ++i;
        } else {
          quoted = false;
        }
      } else {
        cur += c;
      }
    } else if (c == '"') {
      quoted = true;
    } else if (c == ',') {
      fields.push_back(trim(cur));
      cur.clear();
    } else if (c != '\r') {
      cur += c;
    }
  }
  if (quoted) return false;
  fields.push_back(trim(cur));
  return true;
}

Result<PlannedLog> parse_planned_log(std::string_view csv, double default_window_s) {
  PlannedLog log;
  std::vector<std::string> fields;
  std::map<std::string, size_t> col;
  std::map<std::string, size_t> slot_line;
  size_t line_no = 0;
  size_t pos = 0;
  bool header_seen = false;
  if (csv.substr(0, 3) == "\xEF\xBB\xBF") pos = 3;  // UTF-8 byte order mark
  while (pos <= csv.size()) {
    size_t end = csv.find('\n', pos);
    if (end == std::string_view::npos) end = csv.size();
    const std::string_view line = csv.substr(pos, end - pos);
    pos = end + 1;
    ++line_no;
    if (trim(std::string(line)).empty() || line[0] == '#') {
      if (end == csv.size()) break;
      continue;
    }
    if (!split_csv_line(line, fields)) {
      log.problems.push_back({line_no, "unterminated quote"});
      continue;
    }
    if (!header_seen) {
      header_seen = true;
      for (size_t i = 0; i < fields.size(); ++i) col[fields[i]] = i;
      for (const char* need : {"slot", "spot", "planned"})
        if (!col.count(need))
          return Error{ErrorCode::usage,
                       std::string("planned log header lacks the column '") + need +
                           "' (expected slot,spot,planned,window_s)",
                       "", std::nullopt};
      continue;
    }
    auto get = [&](const char* name) -> std::string {
      auto it = col.find(name);
      return it != col.end() && it->second < fields.size() ? fields[it->second] : std::string();
    };
    Placement p;
    p.line = line_no;
    p.slot = get("slot");
    p.spot = get("spot");
    p.planned = get("planned");
    if (p.slot.empty()) {
      log.problems.push_back({line_no, "empty slot id"});
      continue;
    }
    if (auto it = slot_line.find(p.slot); it != slot_line.end()) {
      log.problems.push_back({line_no, "slot '" + p.slot + "' already defined on line " + std::to_string(it->second)});
      continue;
    }
    if (p.spot.empty()) {
      log.problems.push_back({line_no, "empty spot id"});
      continue;
    }
    auto t = parse_iso8601_local(p.planned);
    if (!t) {
      log.problems.push_back({line_no, "planned time '" + p.planned +
                                           "' is not an ISO 8601 local date-time such as 2026-03-14T06:15:00"});
      continue;
    }
    p.planned_s = *t;
    const std::string w = get("window_s");
    p.window_s = default_window_s;
    if (!w.empty()) {
      double v = 0;
      const auto r = std::from_chars(w.data(), w.data() + w.size(), v);
      if (r.ec != std::errc() || r.ptr != w.data() + w.size() || !std::isfinite(v) || v < 0) {
        log.problems.push_back({line_no, "window_s '" + w + "' is not a number of seconds >= 0"});
        continue;
      }
      p.window_s = v;
    }
    slot_line[p.slot] = line_no;
    log.placements.push_back(std::move(p));
    if (end == csv.size()) break;
  }
  if (!header_seen) return Error{ErrorCode::empty, "planned log is empty", "", std::nullopt};
  return log;
}

}  // namespace godwit
