#include "godwit/compliance/planned_log.h"

#include <algorithm>
#include <array>
#include <charconv>
#include <cmath>
#include <map>

namespace godwit {
namespace {

std::string trim(std::string_view s) {
  const auto a = s.find_first_not_of(" \t\r\n");
  if (a == std::string::npos) return {};
  const auto b = s.find_last_not_of(" \t\r\n");
  return std::string(s.substr(a, b - a + 1));
}

enum Field { kSlot, kSpot, kPlanned, kWindow, kFieldCount };

const char* const kFieldWhat[kFieldCount] = {"the slot id", "the spot id", "the planned time", "the window"};

// The alias table (planned_log.h), in normalized form.
struct Alias {
  const char* name;
  Field field;
};
constexpr Alias kAliases[] = {
    {"slot", kSlot},         {"slot_id", kSlot},          {"id", kSlot},
    {"placement", kSlot},    {"placement_id", kSlot},     {"event_id", kSlot},
    {"spot", kSpot},         {"spot_id", kSpot},          {"master", kSpot},
    {"copy", kSpot},         {"copy_id", kSpot},          {"cart", kSpot},
    {"cart_id", kSpot},      {"planned", kPlanned},       {"planned_at", kPlanned},
    {"planned_time", kPlanned}, {"time", kPlanned},       {"air_time", kPlanned},
    {"airtime", kPlanned},   {"datetime", kPlanned},      {"date_time", kPlanned},
    {"scheduled", kPlanned}, {"scheduled_at", kPlanned},  {"scheduled_time", kPlanned},
    {"start", kPlanned},     {"start_time", kPlanned},    {"window_s", kWindow},
    {"window", kWindow},     {"window_seconds", kWindow}, {"tolerance", kWindow},
    {"tolerance_s", kWindow},
};

// Lower case, surrounding spaces gone, runs of space, '-' and '_' inside as
// one '_'.
std::string normalize_name(std::string_view raw) {
  const std::string t = trim(raw);
  std::string out;
  bool sep = false;
  for (char c : t) {
    if (c == ' ' || c == '-' || c == '_' || c == '\t') {
      sep = true;
      continue;
    }
    if (sep && !out.empty()) out += '_';
    sep = false;
    out += c >= 'A' && c <= 'Z' ? static_cast<char>(c - 'A' + 'a') : c;
  }
  return out;
}

std::optional<Field> field_of(std::string_view header_name) {
  const std::string n = normalize_name(header_name);
  for (const auto& a : kAliases)
    if (n == a.name) return a.field;
  return std::nullopt;
}

std::string names_of(Field f) {
  std::string out;
  for (const auto& a : kAliases)
    if (a.field == f) out += (out.empty() ? "" : ", ") + std::string(a.name);
  return out;
}

std::string delimiter_name(char d) { return d == ',' ? "comma" : d == ';' ? "semicolon" : "tab"; }

// The delimiter that splits the header into the most known column names;
// ties: the most columns, then comma, semicolon, tab.
char sniff_delimiter(std::string_view header) {
  char best = ',';
  size_t best_known = 0, best_fields = 0;
  std::vector<std::string> fields;
  for (char d : {',', ';', '\t'}) {
    if (!split_csv_line(header, fields, d)) continue;
    size_t known = 0;
    for (const auto& f : fields) known += field_of(f) ? 1 : 0;
    if (known > best_known || (known == best_known && fields.size() > best_fields)) {
      best = d;
      best_known = known;
      best_fields = fields.size();
    }
  }
  return best;
}

// A number of seconds, 0..86400; a decimal comma when `decimal_comma`.
std::optional<double> read_window(std::string w, bool decimal_comma) {
  if (decimal_comma && std::count(w.begin(), w.end(), ',') == 1 && w.find('.') == std::string::npos)
    std::replace(w.begin(), w.end(), ',', '.');
  double v = 0;
  const auto r = std::from_chars(w.data(), w.data() + w.size(), v);
  if (r.ec != std::errc() || r.ptr != w.data() + w.size() || !std::isfinite(v) || v < 0 || v > 86400)
    return std::nullopt;
  return v;
}

const char* kForms = "such as 2026-03-14T06:15:00, 2026-03-14 06:15 or 2026-03-14T05:15:00Z";

}  // namespace

bool split_csv_line(std::string_view line, std::vector<std::string>& fields, char delimiter) {
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
    } else if (c == delimiter) {
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
  PlannedLogOptions o;
  o.default_window_s = default_window_s;
  return parse_planned_log(csv, o);
}

Result<PlannedLog> parse_planned_log(std::string_view csv, const PlannedLogOptions& options) {
  auto usage = [](std::string msg) { return Error{ErrorCode::usage, std::move(msg), "", std::nullopt}; };
  if (csv.substr(0, 2) == "\xFF\xFE" || csv.substr(0, 2) == "\xFE\xFF")
    return usage("the planned log is UTF-16 text; save it as UTF-8 (\"CSV UTF-8\")");
  PlannedLog log;
  std::vector<std::string> fields;
  std::array<std::optional<size_t>, kFieldCount> col;
  size_t header_fields = 0;
  std::map<std::string, size_t> slot_line;
  size_t line_no = 0;
  size_t pos = 0;
  bool header_seen = false;
  if (csv.substr(0, 3) == "\xEF\xBB\xBF") pos = 3;  // UTF-8 byte order mark
  while (pos < csv.size()) {
    size_t end = csv.find('\n', pos);
    if (end == std::string_view::npos) end = csv.size();
    const std::string_view line = csv.substr(pos, end - pos);
    pos = end + 1;
    ++line_no;
    // Blank lines, comments, and rows of empty fields as spreadsheets export them.
    if (line.find_first_not_of(",;\t \r\"") == std::string_view::npos || line[0] == '#') continue;
    if (!header_seen) {
      header_seen = true;
      log.header_line = line_no;
      log.delimiter = sniff_delimiter(line);
      if (!split_csv_line(line, fields, log.delimiter))
        return usage("the planned log's header (line " + std::to_string(line_no) + ") has an unterminated quote");
      header_fields = fields.size();
      for (size_t i = 0; i < fields.size(); ++i) {
        const auto f = field_of(fields[i]);
        if (!f) continue;
        if (col[*f])
          return usage("the planned log's header names " + std::string(kFieldWhat[*f]) + " twice: column " +
                       std::to_string(*col[*f] + 1) + " '" + fields[*col[*f]] + "' and column " +
                       std::to_string(i + 1) + " '" + fields[i] + "'; keep one");
        col[*f] = i;
      }
      for (Field need : {kSlot, kSpot, kPlanned})
        if (!col[need])
          return usage("the planned log's header lacks " + std::string(kFieldWhat[need]) + " (a column named " +
                       names_of(need) + "); read as " + std::to_string(fields.size()) + " column(s) separated by " +
                       delimiter_name(log.delimiter) + ": '" + trim(line) + "'");
      continue;
    }
    auto problem = [&](std::string reason) { log.problems.push_back({line_no, std::move(reason)}); };
    if (!split_csv_line(line, fields, log.delimiter)) {
      problem("unterminated quote (a quoted field must end on its line)");
      continue;
    }
    if (fields.size() != header_fields) {
      problem("wrong number of fields: " + std::to_string(fields.size()) + " where the header has " +
              std::to_string(header_fields) + " (" + delimiter_name(log.delimiter) +
              "-separated; quote a field that holds the delimiter)");
      continue;
    }
    auto get = [&](Field f) { return col[f] ? fields[*col[f]] : std::string(); };
    Placement p;
    p.line = line_no;
    p.slot = get(kSlot);
    p.spot = get(kSpot);
    p.planned_as_written = get(kPlanned);
    if (p.slot.empty()) {
      problem("empty slot id");
      continue;
    }
    if (auto it = slot_line.find(p.slot); it != slot_line.end()) {
      problem("duplicate slot: '" + p.slot + "' already defined on line " + std::to_string(it->second));
      continue;
    }
    if (p.spot.empty()) {
      problem("empty spot id");
      continue;
    }
    const std::string& written = p.planned_as_written;
    if (written.empty()) {
      problem("empty planned time");
      continue;
    }
    const DateTimeReading t = read_written_date_time(written);
    const std::string quoted = "planned time '" + written + "'";
    if (t.fault == DateTimeFault::not_a_date_time) {
      problem(quoted + " is not a date-time " + kForms);
      continue;
    }
    if (t.fault == DateTimeFault::invalid_date) {
      problem(quoted + " has an invalid calendar date (" + t.detail + ")");
      continue;
    }
    if (t.fault == DateTimeFault::invalid_time) {
      problem(quoted + " has an invalid time of day (hours 00-23, minutes and seconds 00-59)");
      continue;
    }
    if (t.fault == DateTimeFault::invalid_offset) {
      problem(quoted + " has an invalid UTC offset (at most 18:00, minutes 00-59)");
      continue;
    }
    if (t.time.utc_offset_s && !options.zone) {
      problem(quoted + " has a UTC offset; set " + options.zone_setting + " to the station's zone");
      continue;
    }
    p.written_utc_offset_s = t.time.utc_offset_s;
    p.planned_s = t.time.utc_offset_s ? options.zone->local_from_utc(t.time.wall - *t.time.utc_offset_s)
                                      : t.time.wall;
    p.planned = format_iso8601_local(p.planned_s, std::min(t.time.fraction_digits, 6));
    const std::string w = get(kWindow);
    p.window_s = options.default_window_s;
    if (!w.empty()) {
      const auto v = read_window(w, log.delimiter != ',');
      if (!v) {
        problem("window_s '" + w + "' is not a number of seconds from 0 to 86400");
        continue;
      }
      p.window_s = *v;
    }
    slot_line[p.slot] = line_no;
    log.placements.push_back(std::move(p));
  }
  return log;
}

Status require_placements(const PlannedLog& log) {
  if (!log.placements.empty()) return ok_status();
  std::string msg = "the planned log has no valid row";
  if (log.header_line == 0) {
    msg += ": it is empty";
  } else if (log.problems.empty()) {
    msg += ": it holds a header (line " + std::to_string(log.header_line) + ") and no rows";
  } else {
    msg += ": " + std::to_string(log.problems.size()) + " row(s) rejected";
    const size_t shown = std::min<size_t>(log.problems.size(), 3);
    for (size_t i = 0; i < shown; ++i)
      msg += (i ? "; " : " (") + std::string("line ") + std::to_string(log.problems[i].line) + ": " +
             log.problems[i].reason;
    if (log.problems.size() > shown) msg += "; and " + std::to_string(log.problems.size() - shown) + " more";
    msg += ")";
  }
  return Error{ErrorCode::no_placements, msg, "", std::nullopt};
}

}  // namespace godwit
