#include "airings_query.h"

#include <cmath>
#include <cstdio>
#include <cstdlib>

namespace godwit {
namespace {

nlohmann::json parsed(const std::string& text, nlohmann::json fallback) {
  if (text == "[]") return nlohmann::json::array();  // most rows: no parser needed
  try {
    return nlohmann::json::parse(text);
  } catch (const std::exception&) {
    return fallback;
  }
}

std::string make_cursor(LocalSeconds t, int64_t id) {
  char b[64];
  std::snprintf(b, sizeof b, "%.17g/%lld", t, static_cast<long long>(id));
  return b;
}

bool read_cursor(const std::string& c, LocalSeconds& t, int64_t& id) {
  const auto slash = c.find('/');
  if (slash == std::string::npos) return false;
  char* end = nullptr;
  const std::string ts = c.substr(0, slash), is = c.substr(slash + 1);
  t = std::strtod(ts.c_str(), &end);
  if (ts.empty() || *end || !std::isfinite(t)) return false;
  id = std::strtoll(is.c_str(), &end, 10);
  return !is.empty() && !*end;
}

std::string csv(const std::string& s) {
  if (s.find_first_of(",\"\r\n") == std::string::npos) return s;
  std::string o = "\"";
  for (char ch : s) {
    if (ch == '"') o.push_back('"');
    o.push_back(ch);
  }
  o.push_back('"');
  return o;
}

std::string num(double v, int decimals) {
  char b[64];
  std::snprintf(b, sizeof b, "%.*f", decimals, v + 0.0);
  return b;
}

double rounded(double v, int decimals) {
  const double f = std::pow(10.0, decimals);
  return std::round(v * f) / f + 0.0;
}

}  // namespace

std::optional<LocalSeconds> parse_range_start(const std::string& text) {
  if (text.size() == 10) return parse_iso8601_local(text + "T00:00:00");
  return parse_iso8601_local(text);
}

std::optional<LocalSeconds> parse_range_end(const std::string& text) {
  if (text.size() == 10) {
    auto t = parse_iso8601_local(text + "T00:00:00");
    if (t) return *t + 86400;
    return std::nullopt;
  }
  return parse_iso8601_local(text);
}

Result<AiringsPage> query_airings(SqliteDb& db, const AiringsQuery& q) {
  auto usage = [](const std::string& m) { return Error{ErrorCode::usage, m, "", std::nullopt}; };
  if (!q.spot.empty() && !q.advertiser.empty()) return usage("give a spot or an advertiser, not both");
  if (q.limit < 1 || q.limit > kMaxAiringsPage)
    return usage("the limit must be from 1 to " + std::to_string(kMaxAiringsPage));
  if (q.to_local < q.from_local) return usage("the range ends before it starts");
  LocalSeconds after_t = 0;
  int64_t after_id = 0;
  if (!q.cursor.empty() && !read_cursor(q.cursor, after_t, after_id))
    return usage("not a cursor of this query: '" + q.cursor + "'");
  int64_t station_id = 0;
  if (!q.station.empty()) {
    auto st = db.prepare("SELECT id FROM stations WHERE name = ?1");
    if (!st) return st.error();
    st.value().bind(1, q.station);
    auto row = st.value().step();
    if (!row) return row.error();
    if (!row.value()) {
      std::string names;
      auto all = db.prepare("SELECT name FROM stations ORDER BY name");
      if (all)
        while (auto r = all.value().step()) {
          if (!r.value()) break;
          names += (names.empty() ? "" : ", ") + all.value().text(0);
        }
      std::string msg = "no station '";
      msg.append(q.station).append("' in the store");
      if (!names.empty()) msg.append(" (stations: ").append(names).append(")");
      return usage(msg);
    }
    station_id = st.value().integer(0);
  }
  std::string sql =
      "SELECT d.id, s.name, d.aired_local, d.spot, d.advertiser, m.title, r.path, r.sha256, d.offset_s, d.score, "
      "d.speed, d.coverage, d.length_s, d.polarity, d.foreground_contrast, d.spot_lufs, d.programme_lufs, "
      "d.missing_json, d.unrecorded_json, d.versions_json, d.undetermined_json, p.status, p.slot, p.spot, p.planned, "
      "p.deviation_s, j.key, d.tempo "
      "FROM detections d JOIN stations s ON s.id = d.station_id JOIN recordings r ON r.id = d.recording_id "
      "JOIN masters m ON m.id = d.master_id JOIN jobs j ON j.id = d.job_id "
      "LEFT JOIN placements p ON p.detection_id = d.id "
      "WHERE d.aired_local >= ?1 AND d.aired_local < ?2";
  if (station_id) sql += " AND d.station_id = ?3";
  if (!q.spot.empty()) sql += " AND d.spot = ?4";
  if (!q.advertiser.empty()) sql += " AND d.advertiser = ?4";
  if (!q.cursor.empty()) sql += " AND (d.aired_local > ?5 OR (d.aired_local = ?5 AND d.id > ?6))";
  sql += " ORDER BY d.aired_local, d.id LIMIT ?7";
  auto st = db.prepare(sql);
  if (!st) return st.error();
  auto& s = st.value();
  s.bind(1, q.from_local).bind(2, q.to_local);
  if (station_id) s.bind(3, station_id);
  if (!q.spot.empty()) s.bind(4, q.spot);
  if (!q.advertiser.empty()) s.bind(4, q.advertiser);
  if (!q.cursor.empty()) s.bind(5, after_t).bind(6, after_id);
  s.bind(7, static_cast<int64_t>(q.limit + 1));
  AiringsPage page;
  for (;;) {
    auto row = s.step();
    if (!row) return row.error();
    if (!row.value()) break;
    if (page.airings.size() == q.limit) {
      const AiringRow& last = page.airings.back();
      page.next_cursor = make_cursor(last.aired_local, last.id);
      break;
    }
    AiringRow a;
    a.id = s.integer(0);
    a.station = s.text(1);
    a.aired_local = s.real(2);
    a.spot = s.text(3);
    a.advertiser = s.text(4);
    a.title = s.text(5);
    a.recording = s.text(6);
    a.recording_sha256 = s.text(7);
    a.offset_s = s.real(8);
    a.score = s.real(9);
    a.speed = s.real(10);
    a.tempo = s.real(27);
    a.coverage = s.real(11);
    a.length_s = s.real(12);
    a.polarity = static_cast<int>(s.integer(13));
    a.foreground_contrast = s.optional_real(14);
    a.spot_lufs = s.optional_real(15);
    a.programme_lufs = s.optional_real(16);
    a.missing = parsed(s.text(17), nlohmann::json::array());
    a.not_recorded = parsed(s.text(18), nlohmann::json::array());
    a.versions = parsed(s.text(19), nlohmann::json::array());
    a.undetermined = parsed(s.text(20), nlohmann::json::array());
    a.status = s.is_null(21) ? "unscheduled" : s.text(21);
    a.slot = s.text(22);
    a.planned_spot = s.text(23);
    a.planned = s.text(24);
    a.deviation_s = s.optional_real(25);
    a.job = s.text(26);
    page.airings.push_back(std::move(a));
  }
  return page;
}

nlohmann::json airing_to_json(const AiringRow& a) {
  nlohmann::json j{{"station", a.station},
                   {"aired", format_iso8601_local(a.aired_local, 3)},
                   {"spot", a.spot},
                   {"advertiser", a.advertiser},
                   {"title", a.title},
                   {"status", a.status},
                   {"score", rounded(a.score, 4)},
                   {"coverage", rounded(a.coverage, 3)},
                   {"polarity", a.polarity},
                   {"speed", rounded(a.speed, 6)},
                   {"tempo", rounded(a.tempo, 6)},
                   {"recording", a.recording},
                   {"recording_sha256", a.recording_sha256},
                   {"offset_s", rounded(a.offset_s, 6)},
                   {"length_s", rounded(a.length_s, 3)},
                   {"missing", a.missing},
                   {"job", a.job}};
  if (!a.not_recorded.empty()) j["not_recorded"] = a.not_recorded;
  if (!a.versions.empty()) j["versions"] = a.versions;
  if (!a.undetermined.empty()) j["version_undetermined_among"] = a.undetermined;
  if (a.foreground_contrast) j["foreground_contrast"] = rounded(*a.foreground_contrast, 3);
  nlohmann::json l = nlohmann::json::object();
  if (a.spot_lufs) l["spot_lufs"] = rounded(*a.spot_lufs, 1);
  if (a.programme_lufs) l["programme_lufs"] = rounded(*a.programme_lufs, 1);
  if (a.spot_lufs && a.programme_lufs) l["spot_vs_programme_lu"] = rounded(*a.spot_lufs - *a.programme_lufs, 1);
  j["loudness"] = l;
  if (!a.slot.empty()) {
    j["slot"] = a.slot;
    j["planned_spot"] = a.planned_spot;
    j["planned"] = a.planned;
    if (a.deviation_s) j["deviation_s"] = rounded(*a.deviation_s, 3);
  }
  return j;
}

std::string airings_csv_header() {
  return "station,aired,spot,advertiser,status,slot,planned,deviation_s,score,coverage,polarity,speed,tempo,spot_lufs,"
         "programme_lufs,recording,recording_sha256,offset_s\r\n";
}

std::string airing_to_csv(const AiringRow& a) {
  std::string o = csv(a.station);
  auto cell = [&o](const std::string& v) {
    o.push_back(',');
    o.append(v);
  };
  cell(format_iso8601_local(a.aired_local, 3));
  cell(csv(a.spot));
  cell(csv(a.advertiser));
  cell(a.status);
  cell(csv(a.slot));
  cell(csv(a.planned));
  cell(a.deviation_s ? num(*a.deviation_s, 3) : std::string());
  cell(num(a.score, 4));
  cell(num(a.coverage, 3));
  cell(std::to_string(a.polarity));
  cell(num(a.speed, 6));
  cell(num(a.tempo, 6));
  cell(a.spot_lufs ? num(*a.spot_lufs, 1) : std::string());
  cell(a.programme_lufs ? num(*a.programme_lufs, 1) : std::string());
  cell(csv(a.recording));
  cell(a.recording_sha256);
  cell(num(a.offset_s, 6));
  o.append("\r\n");
  return o;
}

}  // namespace godwit
