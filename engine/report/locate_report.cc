#include "godwit/report/locate_report.h"

#include <cmath>
#include <cstdio>
#include <tuple>

#include "csv_field.h"
#include "json_number.h"

namespace godwit {

nlohmann::json error_to_json(const Error& e, bool exact) {
  nlohmann::json j{{"code", std::string(wire_name(e.code))}, {"message", e.message}};
  if (!e.path.empty()) j["path"] = e.path;
  if (e.offset_s) j["offset_s"] = exact ? *e.offset_s : detail::round_decimals(*e.offset_s, 3);
  return j;
}

Error error_from_json(const nlohmann::json& j) {
  Error e;
  e.code = code_from_wire_name(j.value("code", "internal"));
  e.message = j.value("message", "");
  e.path = j.value("path", "");
  if (j.contains("offset_s") && j["offset_s"].is_number()) e.offset_s = j["offset_s"].get<double>();
  return e;
}

nlohmann::json locate_to_json(const LocateResult& r, bool exact) {
  auto round_decimals = [exact](double v, int decimals) { return exact ? v : detail::round_decimals(v, decimals); };
  nlohmann::json j;
  j["analysis_rate_hz"] = r.analysis_rate_hz;
  j["complete"] = r.complete();
  j["templates"] = nlohmann::json::array();
  for (const auto& t : r.templates)
    j["templates"].push_back({{"id", t.id}, {"path", t.path}, {"duration_s", round_decimals(t.duration_s, 6)},
                              {"fft_size", t.fft_size}});
  j["recordings"] = nlohmann::json::array();
  for (const auto& rec : r.recordings) {
    nlohmann::json x{{"path", rec.path},
                     {"format", rec.format},
                     {"duration_s", round_decimals(rec.duration_s, 6)},
                     {"native_rate_hz", rec.native_rate_hz},
                     {"channels", rec.channels}};
    if (rec.error) x["error"] = error_to_json(*rec.error, exact);
    j["recordings"].push_back(std::move(x));
  }
  j["unconfirmed_detections"] = r.unconfirmed;
  j["matches"] = nlohmann::json::array();
  for (const auto& m : r.matches) {
    nlohmann::json x{{"template", m.template_id},
                     {"recording", m.recording},
                     {"offset_s", round_decimals(m.offset_s, 6)},
                     {"score", round_decimals(m.score, 4)},
                     {"polarity", m.polarity},
                     {"speed", round_decimals(m.speed, 6)},
                     {"tempo", round_decimals(m.tempo, 6)},
                     {"refined", m.refined}};
    if (m.coverage) {
      x["coverage"] = round_decimals(*m.coverage, 4);
      nlohmann::json missing = nlohmann::json::array();
      for (const auto& [from, to] : m.missing_s) missing.push_back({round_decimals(from, 3), round_decimals(to, 3)});
      x["missing_s"] = std::move(missing);
    }
    if (!m.alternatives.empty()) {
      x["distinguishing_score"] = round_decimals(m.distinguishing, 4);
      x["version_undetermined"] = m.version_undetermined;
      nlohmann::json alts = nlohmann::json::array();
      for (const auto& a : m.alternatives)
        alts.push_back({{"template", a.template_id},
                        {"score", round_decimals(a.score, 4)},
                        {"distinguishing_score", round_decimals(a.distinguishing, 4)}});
      x["alternatives"] = std::move(alts);
    }
    j["matches"].push_back(std::move(x));
  }
  return j;
}

namespace {

// The place of `m`'s recording in `r` (whose matches so far are read): a
// document names a match's recording by its path only, and lists matches
// by recording in the job's order, then offset, then master (job.h). So a
// match is in the previous match's recording when it names that path and
// follows it in that order, else in the next recording of its path; in a
// document out of that order, the first of its path. Empty when no
// recording of the document has that path.
std::optional<RecordingId> recording_of(const LocateResult& r, const Match& m) {
  auto find = [&](size_t from) -> std::optional<RecordingId> {
    for (size_t i = from; i < r.recordings.size(); ++i)
      if (r.recordings[i].path == m.recording) return RecordingId{i};
    return std::nullopt;
  };
  size_t from = 0;
  if (!r.matches.empty()) {
    const Match& prev = r.matches.back();
    from = prev.recording_id.index;
    if (prev.recording == m.recording &&
        !(std::tie(prev.offset_s, prev.template_id) < std::tie(m.offset_s, m.template_id)))
      ++from;  // not after it: the next copy of that file
  }
  if (auto at = find(from)) return at;
  return find(0);
}

}  // namespace

Result<LocateResult> locate_from_json(const nlohmann::json& j) {
  auto bad = [] { return Error{ErrorCode::internal, "not a locate document", "", std::nullopt}; };
  if (!j.is_object() || !j.contains("templates") || !j.contains("recordings") || !j.contains("matches") ||
      !j["templates"].is_array() || !j["recordings"].is_array() || !j["matches"].is_array())
    return bad();
  try {
    LocateResult r;
    r.analysis_rate_hz = j.value("analysis_rate_hz", 0.0);
    r.unconfirmed = j.value("unconfirmed_detections", size_t{0});
    for (const auto& t : j["templates"])
      r.templates.push_back({t.at("id").get<std::string>(), t.at("path").get<std::string>(),
                             t.at("duration_s").get<double>(), t.at("fft_size").get<size_t>()});
    for (const auto& x : j["recordings"]) {
      RecordingReport rec;
      rec.path = x.at("path").get<std::string>();
      rec.format = x.value("format", "");
      rec.duration_s = x.value("duration_s", 0.0);
      rec.native_rate_hz = x.value("native_rate_hz", 0.0);
      rec.channels = x.value("channels", 0);
      if (x.contains("error")) rec.error = error_from_json(x["error"]);
      r.recordings.push_back(std::move(rec));
    }
    for (const auto& x : j["matches"]) {
      Match m;
      m.template_id = x.at("template").get<std::string>();
      m.recording = x.at("recording").get<std::string>();
      m.offset_s = x.at("offset_s").get<double>();
      m.score = x.at("score").get<double>();
      m.polarity = x.value("polarity", 1);
      m.speed = x.value("speed", 1.0);
      m.tempo = x.value("tempo", 1.0);
      m.refined = x.value("refined", false);
      m.distinguishing = x.value("distinguishing_score", 0.0);
      m.version_undetermined = x.value("version_undetermined", false);
      if (x.contains("coverage")) m.coverage = x.at("coverage").get<double>();
      if (x.contains("missing_s"))
        for (const auto& range : x.at("missing_s"))
          m.missing_s.emplace_back(range.at(0).get<double>(), range.at(1).get<double>());
      if (x.contains("alternatives"))
        for (const auto& a : x.at("alternatives"))
          m.alternatives.push_back({a.at("template").get<std::string>(), a.at("score").get<double>(),
                                    a.value("distinguishing_score", 0.0)});
      auto place = recording_of(r, m);
      if (!place) return bad();
      m.recording_id = *place;
      r.matches.push_back(std::move(m));
    }
    return r;
  } catch (const nlohmann::json::exception&) {
    return bad();
  }
}

std::string locate_to_csv(const LocateResult& r) {
  std::string out = "template,recording,offset_s,score,polarity,speed,tempo\r\n";
  char num[128];
  for (const auto& m : r.matches) {
    std::snprintf(num, sizeof num, ",%.6f,%.4f,%d,%.6f,%.6f\r\n", m.offset_s, m.score, m.polarity, m.speed, m.tempo);
    out += detail::csv_field(m.template_id) + "," + detail::csv_field(m.recording) + num;
  }
  return out;
}

}  // namespace godwit
