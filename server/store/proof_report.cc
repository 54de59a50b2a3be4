#include "proof_report.h"

#include <cmath>
#include <map>
#include <set>

#include "godwit/report/reconcile_report.h"
#include "godwit/compliance/reconciler.h"
#include "godwit/core/version.h"

namespace godwit {
namespace {

double rounded(double v, int decimals) {
  const double f = std::pow(10.0, decimals);
  return std::round(v * f) / f + 0.0;
}

nlohmann::json parsed(const std::string& text) {
  if (text == "[]") return nlohmann::json::array();
  try {
    return nlohmann::json::parse(text);
  } catch (const std::exception&) {
    return nlohmann::json::array();
  }
}

nlohmann::json zero_counts() {
  nlohmann::json c = nlohmann::json::object();
  c["ordered"] = 0;
  for (VerdictStatus st : all_verdicts()) c[verdict_name(st)] = 0;
  c["owed"] = 0;
  c["unscheduled"] = 0;
  return c;
}

void add(nlohmann::json& counts, const std::string& key) { counts[key] = counts.value(key, 0) + 1; }

void count_placement(nlohmann::json& counts, const std::string& status) {
  add(counts, "ordered");
  add(counts, status);
  if (is_owed(status)) add(counts, "owed");
}

}  // namespace

bool is_owed(const std::string& s) {
  return s == "missing" || s == "partial" || s == "wrong_version" || s == "not_recorded";
}

Result<nlohmann::json> build_proof(SqliteDb& db, const ProofQuery& q, const std::string& made) {
  auto usage = [](const std::string& m) { return Error{ErrorCode::usage, m, "", std::nullopt}; };
  if (q.advertiser.empty() == q.spot.empty()) return usage("give an advertiser or a spot (one of them)");
  if (q.to_local < q.from_local) return usage("the range ends before it starts");
  const bool by_spot = !q.spot.empty();
  const std::string& who = by_spot ? q.spot : q.advertiser;

  std::map<std::string, nlohmann::json> stations;  // by name
  std::map<std::tuple<std::string, std::string, std::string>, nlohmann::json> by_spot_day;
  nlohmann::json totals = zero_counts();
  auto station = [&](const std::string& name) -> nlohmann::json& {
    auto it = stations.find(name);
    if (it == stations.end())
      it = stations
               .emplace(name, nlohmann::json{{"station", name},
                                             {"placements", nlohmann::json::array()},
                                             {"unscheduled", nlohmann::json::array()},
                                             {"owed", nlohmann::json::array()},
                                             {"totals", zero_counts()},
                                             {"recordings", nlohmann::json::array()}})
               .first;
    return it->second;
  };
  auto spot_day = [&](const std::string& st, const std::string& day, const std::string& spot) -> nlohmann::json& {
    auto key = std::make_tuple(st, day, spot);
    auto it = by_spot_day.find(key);
    if (it == by_spot_day.end()) {
      nlohmann::json c = zero_counts();
      c["station"] = st;
      c["day"] = day;
      c["spot"] = spot;
      it = by_spot_day.emplace(key, c).first;
    }
    return it->second;
  };
  auto airing = [&](SqliteStatement& s, int col) {
    // aired_local, spot, score, coverage, polarity, speed, spot_lufs,
    // programme_lufs, missing_json, versions_json, undetermined_json, path,
    // sha256, offset_s, tempo (15 columns from `col`)
    nlohmann::json a{{"aired", format_iso8601_local(s.real(col), 3)},
                     {"spot", s.text(col + 1)},
                     {"score", rounded(s.real(col + 2), 4)},
                     {"coverage", rounded(s.real(col + 3), 3)},
                     {"polarity", s.integer(col + 4)},
                     {"speed", rounded(s.real(col + 5), 6)},
                     {"tempo", rounded(s.real(col + 14), 6)},
                     {"missing", parsed(s.text(col + 8))},
                     {"recording", s.text(col + 11)},
                     {"recording_sha256", s.text(col + 12)},
                     {"offset_s", rounded(s.real(col + 13), 6)}};
    const auto versions = parsed(s.text(col + 9));
    if (!versions.empty()) a["versions"] = versions;
    const auto undetermined = parsed(s.text(col + 10));
    if (!undetermined.empty()) a["version_undetermined_among"] = undetermined;
    nlohmann::json l = nlohmann::json::object();
    const auto spot_lufs = s.optional_real(col + 6), prog = s.optional_real(col + 7);
    if (spot_lufs) l["spot_lufs"] = rounded(*spot_lufs, 1);
    if (prog) l["programme_lufs"] = rounded(*prog, 1);
    if (spot_lufs && prog) l["spot_vs_programme_lu"] = rounded(*spot_lufs - *prog, 1);
    a["loudness"] = l;
    return a;
  };
  const std::string airing_cols =
      "d.aired_local, d.spot, d.score, d.coverage, d.polarity, d.speed, d.spot_lufs, d.programme_lufs, d.missing_json, "
      "d.versions_json, d.undetermined_json, r.path, r.sha256, d.offset_s, d.tempo";

  // Placements.
  {
    auto st = db.prepare(
        "SELECT s.name, p.day, p.slot, p.spot, p.title, p.planned, p.window_s, p.status, p.deviation_s, "
        "p.detected_spot, p.unrecorded_json, p.suggestion, j.key, p.detection_id IS NOT NULL AND d.id IS NOT NULL, " +
        airing_cols +
        " FROM placements p JOIN stations s ON s.id = p.station_id JOIN jobs j ON j.id = p.job_id "
        "LEFT JOIN detections d ON d.id = p.detection_id LEFT JOIN recordings r ON r.id = d.recording_id "
        "WHERE p.planned_local >= ?1 AND p.planned_local < ?2 AND " +
        std::string(by_spot ? "p.spot" : "p.advertiser") + " = ?3 ORDER BY s.name, p.planned_local, p.slot");
    if (!st) return st.error();
    auto& s = st.value();
    s.bind(1, q.from_local).bind(2, q.to_local).bind(3, who);
    for (;;) {
      auto row = s.step();
      if (!row) return row.error();
      if (!row.value()) break;
      const std::string name = s.text(0), day = s.text(1), status = s.text(7);
      nlohmann::json p{{"day", day},           {"slot", s.text(2)},         {"spot", s.text(3)},
                       {"title", s.text(4)},   {"planned", s.text(5)},      {"window_s", s.real(6)},
                       {"status", status},     {"owed", is_owed(status)},   {"job", s.text(12)}};
      if (s.integer(13)) {
        p["airing"] = airing(s, 14);
        p["detected_spot"] = s.text(9);
        if (auto dev = s.optional_real(8)) p["deviation_s"] = rounded(*dev, 3);
      }
      if (status == "not_recorded") p["not_recorded"] = parsed(s.text(10));
      if (!s.text(11).empty()) p["did_you_mean"] = s.text(11);
      nlohmann::json& st_doc = station(name);
      if (is_owed(status)) st_doc["owed"].push_back(p["slot"]);
      count_placement(st_doc["totals"], status);
      count_placement(spot_day(name, day, s.text(3)), status);
      count_placement(totals, status);
      st_doc["placements"].push_back(std::move(p));
    }
  }
  // Airings of the advertiser (or spot) that served no placement.
  {
    auto st = db.prepare(
        "SELECT s.name, j.key, " + airing_cols +
        " FROM detections d JOIN stations s ON s.id = d.station_id JOIN jobs j ON j.id = d.job_id "
        "JOIN recordings r ON r.id = d.recording_id LEFT JOIN placements p ON p.detection_id = d.id "
        "WHERE d.aired_local >= ?1 AND d.aired_local < ?2 AND " +
        std::string(by_spot ? "d.spot" : "d.advertiser") +
        " = ?3 AND p.id IS NULL ORDER BY s.name, d.aired_local, d.id");
    if (!st) return st.error();
    auto& s = st.value();
    s.bind(1, q.from_local).bind(2, q.to_local).bind(3, who);
    for (;;) {
      auto row = s.step();
      if (!row) return row.error();
      if (!row.value()) break;
      nlohmann::json a = airing(s, 2);
      a["job"] = s.text(1);
      const std::string name = s.text(0), day = a["aired"].get<std::string>().substr(0, 10);
      nlohmann::json& st_doc = station(name);
      add(st_doc["totals"], "unscheduled");
      add(spot_day(name, day, a["spot"]), "unscheduled");
      add(totals, "unscheduled");
      st_doc["unscheduled"].push_back(std::move(a));
    }
  }
  // The recordings of each station overlapping the range.
  {
    auto st = db.prepare(
        "SELECT r.path, r.sha256, r.start_local, r.duration_s, r.rate_hz, r.codec, r.channels, r.error FROM recordings r "
        "JOIN stations s ON s.id = r.station_id WHERE s.name = ?1 AND r.start_local < ?3 AND "
        "r.start_local + r.duration_s > ?2 ORDER BY r.start_local, r.path");
    if (!st) return st.error();
    auto& s = st.value();
    for (auto& [name, doc] : stations) {
      s.reset();
      s.bind(1, name).bind(2, q.from_local).bind(3, q.to_local);
      for (;;) {
        auto row = s.step();
        if (!row) return row.error();
        if (!row.value()) break;
        nlohmann::json r{{"path", s.text(0)},
                         {"sha256", s.text(1)},
                         {"start", format_iso8601_local(s.real(2), 3)},
                         {"duration_s", rounded(s.real(3), 3)},
                         {"rate_hz", s.real(4)},
                         {"codec", s.text(5)},
                         {"channels", s.integer(6)}};
        if (!s.text(7).empty()) r["error"] = s.text(7);
        doc["recordings"].push_back(std::move(r));
      }
    }
  }
  nlohmann::json doc;
  doc["proof"] = {{"from", q.from_text},
                  {"to", q.to_text},
                  {"from_local", format_iso8601_local(q.from_local, 0)},
                  {"to_local", format_iso8601_local(q.to_local, 0)},
                  {"made", made},
                  {"software", std::string("godwit ") + godwit_version()}};
  doc["proof"][by_spot ? "spot" : "advertiser"] = who;
  doc["stations"] = nlohmann::json::array();
  for (auto& [name, s] : stations) doc["stations"].push_back(std::move(s));
  doc["totals_by_spot_day"] = nlohmann::json::array();
  for (auto& [key, c] : by_spot_day) doc["totals_by_spot_day"].push_back(std::move(c));
  doc["totals"] = totals;
  doc["cautions"] = {kEvidenceCaution, kLoudnessCaution};
  return doc;
}

}  // namespace godwit
