#include "godwit/report/reconcile_report.h"

#include <algorithm>
#include <cmath>
#include <cstdio>

#include "csv_field.h"
#include "json_number.h"

#include "godwit/report/locate_report.h"

namespace godwit {

const char* const kEvidenceCaution =
    "Detections are evidence to verify by listening: play the recording at the reported offset before relying on "
    "a verdict in a dispute.";

const char* const kLoudnessCaution =
    "Loudness figures are indicative (ITU-R BS.1770 integrated loudness through libebur128 on the aircheck as "
    "recorded), not a certified measurement; local regulation and certified meters decide.";

namespace {

nlohmann::json loudness_fields(const AiringRecord& a, const LoudnessOptions& o) {
  nlohmann::json l = nlohmann::json::object();
  if (a.spot_lufs) {
    l["spot_lufs"] = detail::round_decimals(*a.spot_lufs, 1);
    l["target_lufs"] = o.target_lufs;
    l["spot_vs_target_lu"] = detail::round_decimals(*a.spot_lufs - o.target_lufs, 1);
  }
  if (a.programme_lufs) l["programme_lufs"] = detail::round_decimals(*a.programme_lufs, 1);
  if (a.spot_lufs && a.programme_lufs) {
    const double d = *a.spot_lufs - *a.programme_lufs;
    l["spot_vs_programme_lu"] = detail::round_decimals(d, 1);
    l["louder_than_programme"] = d > o.louder_margin_lu;
    l["margin_lu"] = o.louder_margin_lu;
  }
  return l;
}

nlohmann::json airing_fields(const AiringRecord& a, const LoudnessOptions& o) {
  nlohmann::json j{{"aired", format_iso8601_local(a.aired_s, 3)},
                   {"score", detail::round_decimals(a.score, 4)},
                   {"coverage", detail::round_decimals(a.coverage, 3)},
                   {"recording", a.recording},
                   {"offset_s", detail::round_decimals(a.offset_s, 6)},
                   {"polarity", a.polarity},
                   {"speed", detail::round_decimals(a.speed, 6)},
                   {"tempo", detail::round_decimals(a.tempo, 6)}};
  nlohmann::json missing = nlohmann::json::array();
  for (const auto& [from, to] : a.missing_s) missing.push_back({detail::round_decimals(from, 3), detail::round_decimals(to, 3)});
  j["missing"] = missing;
  if (!a.unrecorded_s.empty()) {
    nlohmann::json u = nlohmann::json::array();
    for (const auto& [from, to] : a.unrecorded_s) u.push_back({detail::round_decimals(from, 3), detail::round_decimals(to, 3)});
    j["not_recorded"] = u;
  }
  const Profile& pr = a.profile;
  if (pr.aired_to_s > pr.aired_from_s)
    j["aired_part"] = {{"from_s", detail::round_decimals(pr.aired_from_s, 3)},
                       {"to_s", detail::round_decimals(pr.aired_to_s, 3)},
                       {"from_range_s", {detail::round_decimals(pr.aired_from_range_s.first, 3),
                                         detail::round_decimals(pr.aired_from_range_s.second, 3)}},
                       {"to_range_s", {detail::round_decimals(pr.aired_to_range_s.first, 3),
                                       detail::round_decimals(pr.aired_to_range_s.second, 3)}},
                       {"coverage_range", {detail::round_decimals(pr.coverage_range.first, 3),
                                           detail::round_decimals(pr.coverage_range.second, 3)}}};
  if (!a.undetermined_among.empty()) j["version_undetermined_among"] = a.undetermined_among;
  if (!a.versions.empty()) {
    nlohmann::json v = nlohmann::json::array();
    for (const auto& s : a.versions) v.push_back({{"spot", s.spot}, {"score", detail::round_decimals(s.score, 4)}});
    j["versions"] = v;
  }
  if (a.foreground_contrast) j["foreground_contrast"] = detail::round_decimals(*a.foreground_contrast, 3);
  if (a.shape_match) j["shape_match"] = detail::round_decimals(*a.shape_match, 3);
  nlohmann::json prof = nlohmann::json::array();
  for (float s : a.profile.scores) prof.push_back(detail::round_decimals(s, 3));
  j["profile"] = {{"segment_s", a.profile.segment_s}, {"scores", prof}};
  j["loudness"] = loudness_fields(a, o);
  return j;
}


// The sidecar's advertiser and title of `spot`, when it has them.
void meta_fields(const ReconcileResult& r, const std::string& spot, nlohmann::json& j) {
  auto it = r.spots.find(spot);
  if (it == r.spots.end()) return;
  if (!it->second.meta.advertiser.empty()) j["advertiser"] = it->second.meta.advertiser;
  if (!it->second.meta.title.empty()) j["title"] = it->second.meta.title;
}

void excerpt_fields(const Listening* l, size_t airing, const std::string& heard, nlohmann::json& j) {
  if (!l) return;
  if (auto it = l->airings.find(airing); it != l->airings.end())
    j["excerpt"] = {{"file", it->second.file},
                    {"from_s", detail::round_decimals(it->second.from_s, 3)},
                    {"duration_s", detail::round_decimals(it->second.duration_s, 3)},
                    {"bytes", it->second.bytes}};
  if (auto it = l->masters.find(heard); it != l->masters.end()) j["master_excerpt"] = it->second.file;
}

}  // namespace

const std::string& reported_spot(const AiringRecord& a, const Placement& p) {
  const bool fits = std::find(a.undetermined_among.begin(), a.undetermined_among.end(), p.spot) !=
                    a.undetermined_among.end();
  return fits ? p.spot : a.spot;
}

nlohmann::json reconcile_to_json(const ReconcileResult& r, const LoudnessOptions& lo, const Listening* listening) {
  nlohmann::json j;
  nlohmann::json summary = nlohmann::json::object();
  for (VerdictStatus st : all_verdicts()) summary[verdict_name(st)] = 0;
  j["placements"] = nlohmann::json::array();
  for (const auto& v : r.verdicts) {
    const Placement& p = r.placements[v.placement];
    nlohmann::json x{{"slot", p.slot}, {"spot", p.spot}, {"planned", p.planned}, {"window_s", p.window_s},
                     {"status", verdict_name(v.status)}};
    if (!p.planned_as_written.empty() && p.planned_as_written != p.planned) x["planned_as_written"] = p.planned_as_written;
    meta_fields(r, p.spot, x);
    summary[verdict_name(v.status)] = summary[verdict_name(v.status)].get<int>() + 1;
    if (v.airing) {
      const AiringRecord& a = r.airings[*v.airing];
      x.update(airing_fields(a, lo));
      x["deviation_s"] = detail::round_decimals(v.deviation_s, 3);
      x["detected_spot"] = reported_spot(a, p);
      excerpt_fields(listening, *v.airing, reported_spot(a, p), x);
    }
    if (v.status == VerdictStatus::not_recorded) {
      auto spans = [](const std::vector<LocalSpan>& list) {
        nlohmann::json a = nlohmann::json::array();
        for (const auto& [from, to] : list) a.push_back({format_iso8601_local(from, 3), format_iso8601_local(to, 3)});
        return a;
      };
      x["unrecorded"] = spans(v.unrecorded);
      x["recorded"] = spans(v.recorded);
    }
    if (v.status == VerdictStatus::unknown_spot && !v.suggestion.empty()) x["did_you_mean"] = v.suggestion;
    j["placements"].push_back(std::move(x));
  }
  j["unscheduled"] = nlohmann::json::array();
  for (size_t i : r.unscheduled) {
    nlohmann::json x{{"spot", r.airings[i].spot}};
    meta_fields(r, r.airings[i].spot, x);
    x.update(airing_fields(r.airings[i], lo));
    excerpt_fields(listening, i, r.airings[i].spot, x);
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
  j["rejected_detections"] = nlohmann::json::array();
  for (const auto& x : r.rejected) {
    nlohmann::json d{{"spot", x.spot},
                     {"aired", format_iso8601_local(x.aired_s, 3)},
                     {"score", detail::round_decimals(x.score, 4)},
                     {"speed", detail::round_decimals(x.speed, 6)},
                     {"tempo", detail::round_decimals(x.tempo, 6)},
                     {"coverage", detail::round_decimals(x.coverage, 3)},
                     {"aired_score", detail::round_decimals(x.aired_score, 3)}};
    if (x.foreground_contrast) d["foreground_contrast"] = detail::round_decimals(*x.foreground_contrast, 3);
    if (x.shape_match) d["shape_match"] = detail::round_decimals(*x.shape_match, 3);
    j["rejected_detections"].push_back(std::move(d));
  }
  if (listening && !listening->problems.empty()) j["excerpt_problems"] = listening->problems;
  j["cautions"] = {kEvidenceCaution, kLoudnessCaution};
  return j;
}

std::string reconcile_to_csv(const ReconcileResult& r) {
  std::string out =
      "slot,spot,planned,status,aired,deviation_s,score,coverage,detected_spot,recording,offset_s,spot_lufs,"
      "programme_lufs,speed,tempo\r\n";
  auto lufs = [](const AiringRecord& a) {
    char b[64];
    std::string s = ",";
    if (a.spot_lufs) std::snprintf(b, sizeof b, "%.1f", *a.spot_lufs), s += b;
    s += ",";
    if (a.programme_lufs) std::snprintf(b, sizeof b, "%.1f", *a.programme_lufs), s += b;
    std::snprintf(b, sizeof b, ",%.6f,%.6f", a.speed, a.tempo);
    return s + b;
  };
  char num[128];
  for (const auto& v : r.verdicts) {
    const Placement& p = r.placements[v.placement];
    out += detail::csv_field(p.slot) + "," + detail::csv_field(p.spot) + "," + detail::csv_field(p.planned) + "," + verdict_name(v.status) + ",";
    if (v.airing) {
      const AiringRecord& a = r.airings[*v.airing];
      std::snprintf(num, sizeof num, ",%.3f,%.4f,%.3f,", detail::round_decimals(v.deviation_s, 3), a.score, a.coverage);
      out += format_iso8601_local(a.aired_s, 3) + num + detail::csv_field(reported_spot(a, p)) + "," + detail::csv_field(a.recording);
      std::snprintf(num, sizeof num, ",%.6f", a.offset_s);
      out += num + lufs(a);
    } else {
      out += ",,,,,,,,,";
    }
    out += "\r\n";
  }
  for (size_t i : r.unscheduled) {
    const AiringRecord& a = r.airings[i];
    // slot and planned empty; status "unscheduled"; no deviation.
    std::snprintf(num, sizeof num, ",,%.4f,%.3f,", a.score, a.coverage);
    // Appended piece by piece: `"," + std::string&&` trips GCC 12's -Wrestrict false positive (PR 105329).
    out += ',';
    out += detail::csv_field(a.spot) + ",,unscheduled," + format_iso8601_local(a.aired_s, 3) + num + detail::csv_field(a.spot) +
           "," + detail::csv_field(a.recording);
    std::snprintf(num, sizeof num, ",%.6f", a.offset_s);
    out += num + lufs(a) + "\r\n";
  }
  return out;
}

}  // namespace godwit
