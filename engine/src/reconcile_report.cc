#include "godwit/reconcile_report.h"

#include <algorithm>
#include <cmath>
#include <cstdio>

#include "json_number.h"

#include "godwit/locate_report.h"

namespace godwit {

const char* const kEvidenceCaution =
    "Detections are evidence to verify by listening: play the recording at the reported offset before relying on "
    "a verdict in a dispute.";

namespace {


nlohmann::json airing_fields(const AiringRecord& a) {
  nlohmann::json j{{"aired", format_iso8601_local(a.aired_s, 3)},
                   {"score", detail::round_decimals(a.score, 4)},
                   {"coverage", detail::round_decimals(a.coverage, 3)},
                   {"recording", a.recording},
                   {"offset_s", detail::round_decimals(a.offset_s, 6)},
                   {"polarity", a.polarity}};
  nlohmann::json missing = nlohmann::json::array();
  for (const auto& [from, to] : a.missing_s) missing.push_back({detail::round_decimals(from, 3), detail::round_decimals(to, 3)});
  j["missing"] = missing;
  if (!a.undetermined_among.empty()) j["version_undetermined_among"] = a.undetermined_among;
  if (!a.versions.empty()) {
    nlohmann::json v = nlohmann::json::array();
    for (const auto& s : a.versions) v.push_back({{"spot", s.spot}, {"score", detail::round_decimals(s.score, 4)}});
    j["versions"] = v;
  }
  nlohmann::json prof = nlohmann::json::array();
  for (float s : a.profile.scores) prof.push_back(detail::round_decimals(s, 3));
  j["profile"] = {{"segment_s", a.profile.segment_s}, {"scores", prof}};
  return j;
}

std::string csv_field(const std::string& s) {
  if (s.find_first_of(",\"\n\r") == std::string::npos) return s;
  std::string q = "\"";
  for (char c : s) {
    if (c == '"') q += '"';
    q += c;
  }
  return q + "\"";
}

}  // namespace

const std::string& reported_spot(const AiringRecord& a, const Placement& p) {
  const bool fits = std::find(a.undetermined_among.begin(), a.undetermined_among.end(), p.spot) !=
                    a.undetermined_among.end();
  return fits ? p.spot : a.spot;
}

nlohmann::json reconcile_to_json(const ReconcileResult& r) {
  nlohmann::json j;
  nlohmann::json summary = {{"aired", 0}, {"early", 0}, {"late", 0}, {"missing", 0}, {"partial", 0}, {"wrong_version", 0}};
  j["placements"] = nlohmann::json::array();
  for (const auto& v : r.verdicts) {
    const Placement& p = r.placements[v.placement];
    nlohmann::json x{{"slot", p.slot}, {"spot", p.spot}, {"planned", p.planned}, {"window_s", p.window_s},
                     {"status", verdict_name(v.status)}};
    summary[verdict_name(v.status)] = summary[verdict_name(v.status)].get<int>() + 1;
    if (v.airing) {
      const AiringRecord& a = r.airings[*v.airing];
      x.update(airing_fields(a));
      x["deviation_s"] = detail::round_decimals(v.deviation_s, 3);
      x["detected_spot"] = reported_spot(a, p);
    }
    j["placements"].push_back(std::move(x));
  }
  j["unscheduled"] = nlohmann::json::array();
  for (size_t i : r.unscheduled) {
    nlohmann::json x{{"spot", r.airings[i].spot}};
    x.update(airing_fields(r.airings[i]));
    j["unscheduled"].push_back(std::move(x));
  }
  summary["unscheduled"] = r.unscheduled.size();
  j["summary"] = summary;
  j["recordings"] = nlohmann::json::array();
  for (const auto& s : r.recordings) {
    nlohmann::json x{{"path", s.path}, {"duration_s", detail::round_decimals(s.duration_s, 6)}, {"native_rate_hz", s.native_rate_hz}};
    if (s.start_s) x["start"] = format_iso8601_local(*s.start_s, 3);
    if (s.error) x["error"] = error_to_json(*s.error);
    j["recordings"].push_back(std::move(x));
  }
  j["timeline_issues"] = nlohmann::json::array();
  for (const auto& t : r.timeline_issues)
    j["timeline_issues"].push_back({{"kind", timeline_issue_name(t.kind)}, {"before", t.before}, {"after", t.after},
                                    {"at", format_iso8601_local(t.at_s, 3)}, {"seconds", detail::round_decimals(t.seconds, 3)}});
  j["log_problems"] = nlohmann::json::array();
  for (const auto& p : r.log_problems) j["log_problems"].push_back({{"line", p.line}, {"reason", p.reason}});
  j["families"] = r.families;
  j["rejected_weak_detections"] = r.rejected_weak;
  j["cautions"] = {kEvidenceCaution};
  return j;
}

std::string reconcile_to_csv(const ReconcileResult& r) {
  std::string out = "slot,spot,planned,status,aired,deviation_s,score,coverage,detected_spot,recording,offset_s\r\n";
  char num[128];
  for (const auto& v : r.verdicts) {
    const Placement& p = r.placements[v.placement];
    out += csv_field(p.slot) + "," + csv_field(p.spot) + "," + csv_field(p.planned) + "," + verdict_name(v.status) + ",";
    if (v.airing) {
      const AiringRecord& a = r.airings[*v.airing];
      std::snprintf(num, sizeof num, ",%.3f,%.4f,%.3f,", v.deviation_s, a.score, a.coverage);
      out += format_iso8601_local(a.aired_s, 3) + num + csv_field(reported_spot(a, p)) + "," + csv_field(a.recording);
      std::snprintf(num, sizeof num, ",%.6f", a.offset_s);
      out += num;
    } else {
      out += ",,,,,,";
    }
    out += "\r\n";
  }
  for (size_t i : r.unscheduled) {
    const AiringRecord& a = r.airings[i];
    // slot and planned empty; status "unscheduled"; no deviation.
    std::snprintf(num, sizeof num, ",,%.4f,%.3f,", a.score, a.coverage);
    out += "," + csv_field(a.spot) + ",,unscheduled," + format_iso8601_local(a.aired_s, 3) + num + csv_field(a.spot) +
           "," + csv_field(a.recording);
    std::snprintf(num, sizeof num, ",%.6f\r\n", a.offset_s);
    out += num;
  }
  return out;
}

}  // namespace godwit
