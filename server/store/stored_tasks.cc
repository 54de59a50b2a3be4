#include "stored_tasks.h"

#include <cmath>
#include <limits>
#include <set>

#include "file_digest.h"
#include "godwit/audio/audio_source.h"
#include "godwit/core/version.h"

namespace godwit {
namespace {

// Seconds as whole microseconds: the same piece planned from runs that
// start elsewhere gives the same key despite rounding.
nlohmann::json micros(double s) {
  return std::isfinite(s) ? nlohmann::json(std::llround(s * 1e6)) : nlohmann::json(nullptr);
}

// A located document's numbers moved by `by_s` (to a piece's first frame
// read and back), and its recording named `name` (when not empty).
void shift_match(nlohmann::json& m, double by_s, const std::string& name) {
  m["offset_s"] = m.at("offset_s").get<double>() + by_s;
  if (!name.empty()) m["recording"] = name;
}
void shift_recording(nlohmann::json& r, double by_s, const std::string& name) {
  r["duration_s"] = r.at("duration_s").get<double>() + by_s;
  if (r.contains("error") && r["error"].contains("offset_s") && r["error"]["offset_s"].is_number())
    r["error"]["offset_s"] = r["error"]["offset_s"].get<double>() + by_s;
  if (!name.empty()) r["path"] = name;
}

}  // namespace

std::string search_fingerprint(const LocateOptions& l) {
  nlohmann::json j{{"analysis_rate_hz", l.analysis_rate_hz},
                   {"threshold", l.picker.threshold},
                   {"floor_k", l.picker.floor_k},
                   {"refine", l.refine},
                   {"channel", l.channel.channel},
                   {"speed", {{"enabled", l.speed.enabled},
                              {"max_deviation", l.speed.max_deviation},
                              {"max_tempo_deviation", l.speed.max_tempo_deviation}}}};
  return j.dump();  // keys sorted: canonical
}

std::string evidence_fingerprint(const ReconcileOptions& o) {
  nlohmann::json j{{"channel", o.locate.channel.channel},
                   {"analysis_rate_hz", o.locate.analysis_rate_hz},
                   {"min_airing_score", o.min_airing_score},
                   {"min_coverage", o.min_coverage},
                   {"max_foreground_deficit", o.max_foreground_deficit},
                   {"min_foreground_evidence", o.min_foreground_evidence},
                   {"foreground_edge_s", o.foreground_edge_s},
                   {"loudness", {{"enabled", o.loudness.enabled}, {"programme_s", o.loudness.programme_s}}},
                   {"verify", {{"segment_s", o.verify.segment_s}, {"min_segment_score", o.verify.min_segment_score},
                               {"relative", o.verify.relative}}}};
  return j.dump();
}

StoredTaskRunner::StoredTaskRunner(RecordStore& store, TaskRunner& inner, std::string search_options)
    : store_(store), inner_(inner), search_options_(std::move(search_options)) {}

Result<std::string> StoredTaskRunner::digest(const std::string& path) {
  auto it = digests_.find(path);
  if (it != digests_.end()) return it->second;
  auto d = store_.file_digest(path);
  if (!d) return d.error();
  digests_[path] = d.value();
  return d;
}

Result<std::vector<nlohmann::json>> StoredTaskRunner::run(const std::string& job_id,
                                                          const std::vector<PlannedTask>& tasks,
                                                          const std::function<void(double)>& progress,
                                                          const std::function<bool()>& should_stop,
                                                          const std::function<void(std::string_view)>& warn) {
  struct Piece {
    std::string key;  // of what the task reads and owns
    std::vector<std::string> files;  // the SHA-256 of each file it reads
    Segment segment;
    std::vector<std::string> templates, master_sha;
    std::vector<nlohmann::json> rows;  // per template: its kept result (null: to search)
  };
  std::vector<Piece> pieces(tasks.size());
  std::vector<PlannedTask> to_search;
  std::vector<size_t> searched_for;  // the piece each task of to_search serves
  for (size_t i = 0; i < tasks.size(); ++i) {
    auto spec = job_spec_from_json(tasks[i].spec);
    if (!spec) return spec.error();
    const auto* seg = std::get_if<SegmentSpec>(&spec.value());
    if (!seg) return Error{ErrorCode::internal, "a task that is not a segment", "", std::nullopt};
    Piece& p = pieces[i];
    p.segment = seg->segment;
    p.templates = seg->templates;
    const Stream& st = p.segment.stream;
    nlohmann::json parts = nlohmann::json::array();
    if (st.parts.empty()) {
      auto d = digest(st.name);
      if (!d) return d.error();
      parts.push_back({d.value(), "whole"});
      p.files.push_back(d.value());
    } else {
      const int64_t from = std::llround(p.segment.read_from_s * st.rate_hz);
      const int64_t to = std::isfinite(p.segment.read_to_s) ? std::llround(p.segment.read_to_s * st.rate_hz)
                                                            : std::numeric_limits<int64_t>::max();
      for (const auto& w : window_parts(st.parts, st.rate_hz, from, to)) {
        auto d = digest(w.path);
        if (!d) return d.error();
        parts.push_back({d.value(), w.skip_frames, w.frames, w.rate_hz});
        p.files.push_back(d.value());
      }
    }
    const double at = p.segment.read_from_s;
    const nlohmann::json key{{"version", godwit_version()},
                             {"search", search_options_},
                             {"rate_hz", st.rate_hz},
                             {"parts", parts},
                             {"own", {micros(p.segment.own_from_s - at), micros(p.segment.own_to_s - at)}}};
    p.key = sha256_hex(key.dump());
    std::vector<std::string> missing;
    for (const auto& t : p.templates) {
      auto d = digest(t);
      if (!d) return d.error();
      p.master_sha.push_back(d.value());
      auto kept = store_.stored_result("search", p.key, d.value(), template_id_for(t));
      nlohmann::json row;
      if (kept) row = nlohmann::json::parse(*kept, nullptr, false);
      if (row.is_discarded() || row.is_null()) {
        row = nullptr;
        missing.push_back(t);
        ++counts_.searched;
      } else {
        ++counts_.reused;
      }
      p.rows.push_back(std::move(row));
    }
    if (missing.empty()) continue;
    SegmentSpec sub = *seg;
    sub.templates = missing;
    PlannedTask t;
    t.spec = job_spec_to_json(sub);
    t.id = tasks[i].id + (missing.size() == p.templates.size() ? "" : "-" + sha256_hex(t.spec.dump()).substr(0, 8));
    t.stream = tasks[i].stream;
    to_search.push_back(std::move(t));
    searched_for.push_back(i);
  }
  std::vector<nlohmann::json> found;
  if (!to_search.empty()) {
    auto r = inner_.run(job_id, to_search, progress, should_stop, warn);
    if (!r) return r.error();
    found = std::move(r.value());
    if (found.size() != to_search.size()) return Error{ErrorCode::internal, "results for other tasks", "", std::nullopt};
  }
  if (progress) progress(1.0);
  // Each new result split per master, with offsets from the piece's first
  // frame read, kept unless its recording failed.
  std::vector<StoredResult> keep;
  std::vector<nlohmann::json> fresh_recording(tasks.size());
  for (size_t k = 0; k < found.size(); ++k) {
    Piece& p = pieces[searched_for[k]];
    const nlohmann::json& doc = found[k];
    const double at = p.segment.read_from_s;
    nlohmann::json rec = doc.at("recordings").empty() ? nlohmann::json() : doc["recordings"][0];
    const bool failed = rec.is_object() && rec.contains("error");
    if (rec.is_object()) shift_recording(rec, -at, "");
    if (failed) fresh_recording[searched_for[k]] = rec;
    for (size_t m = 0; m < p.templates.size(); ++m) {
      if (!p.rows[m].is_null()) continue;
      const std::string id = template_id_for(p.templates[m]);
      nlohmann::json row{{"analysis_rate_hz", doc.value("analysis_rate_hz", 8000.0)},
                         {"recording", rec},
                         {"matches", nlohmann::json::array()}};
      for (const auto& t : doc.at("templates"))
        if (t.value("id", "") == id) row["template"] = t;
      if (!row.contains("template")) continue;  // the merge says which master no task reports
      for (auto mt : doc.at("matches")) {
        if (mt.value("template", "") != id) continue;
        shift_match(mt, -at, "");
        row["matches"].push_back(std::move(mt));
      }
      if (!failed) keep.push_back({"search", p.key, p.master_sha[m], id, row.dump(), p.files});
      p.rows[m] = std::move(row);
    }
  }
  if (auto st = store_.store_results(keep); !st && warn) warn("search results not kept: " + st.error().describe());
  // Each task's document, from its masters' results, in stream time.
  std::vector<nlohmann::json> out;
  for (size_t i = 0; i < tasks.size(); ++i) {
    Piece& p = pieces[i];
    const double at = p.segment.read_from_s;
    const std::string& name = p.segment.stream.name;
    nlohmann::json doc{{"analysis_rate_hz", 8000.0},
                       {"complete", true},
                       {"templates", nlohmann::json::array()},
                       {"recordings", nlohmann::json::array()},
                       {"unconfirmed_detections", 0},
                       {"matches", nlohmann::json::array()}};
    nlohmann::json rec = fresh_recording[i];
    for (size_t m = 0; m < p.rows.size(); ++m) {
      nlohmann::json& row = p.rows[m];
      if (row.is_null()) continue;
      doc["analysis_rate_hz"] = row.value("analysis_rate_hz", 8000.0);
      nlohmann::json t = row["template"];
      t["path"] = p.templates[m];  // as this job names it (the same content may be elsewhere now)
      doc["templates"].push_back(std::move(t));
      if (rec.is_null() && row["recording"].is_object()) rec = row["recording"];
      for (auto mt : row["matches"]) {
        shift_match(mt, at, name);
        doc["matches"].push_back(std::move(mt));
      }
    }
    if (rec.is_object()) {
      shift_recording(rec, at, name);
      doc["recordings"].push_back(std::move(rec));
    }
    out.push_back(std::move(doc));
  }
  return out;
}

std::vector<std::optional<DetectionEvidence>> StoredTaskRunner::evidence(const std::vector<TemplateReport>& templates,
                                                                         const std::vector<ConcatPart>& parts,
                                                                         const std::vector<Match>& matches,
                                                                         const ReconcileOptions& options) {
  std::vector<std::optional<DetectionEvidence>> out(matches.size());
  if (matches.empty() || parts.empty()) return out;
  double rate = parts.front().rate_hz;
  if (!(rate > 0)) {
    auto src = open_audio_file(parts.front().path);
    if (!src) return TaskRunner::evidence(templates, parts, matches, options);
    rate = src.value()->info().native_rate_hz;
  }
  const std::string fp = evidence_fingerprint(options);
  std::map<std::string, const TemplateReport*> by_id;
  for (const auto& t : templates) by_id[t.id] = &t;
  struct Miss {
    size_t index;
    std::string key, master;
    std::vector<std::string> files;
  };
  std::vector<Miss> misses;
  std::vector<Match> to_gather;
  for (size_t i = 0; i < matches.size(); ++i) {
    const Match& m = matches[i];
    auto t = by_id.find(m.template_id);
    auto master = t == by_id.end() ? Result<std::string>(Error{ErrorCode::internal, "", "", std::nullopt})
                                   : digest(t->second->path);
    std::string key;
    std::vector<std::string> files;
    if (master) {
      // The files around it: the programme measured before it, the airing
      // after, a second either side.
      const double from_s = std::max(0.0, m.offset_s - options.loudness.programme_s - 1);
      const double to_s = m.offset_s + t->second->duration_s / m.speed + 1;
      const int64_t from = std::llround(from_s * rate);
      nlohmann::json ps = nlohmann::json::array();
      bool ok = true;
      for (const auto& w : window_parts(parts, rate, from, std::llround(to_s * rate))) {
        auto d = digest(w.path);
        if (!d) {
          ok = false;
        } else {
          ps.push_back({d.value(), w.skip_frames, w.frames, w.rate_hz});
          files.push_back(d.value());
        }
      }
      if (ok) {
        const nlohmann::json k{{"version", godwit_version()},
                               {"evidence", fp},
                               {"rate_hz", rate},
                               {"parts", ps},
                               {"at", micros(m.offset_s - static_cast<double>(from) / rate)},
                               {"speed", m.speed},
                               {"tempo", m.tempo},
                               {"polarity", m.polarity}};
        key = sha256_hex(k.dump());
      }
    }
    if (!key.empty()) {
      if (auto kept = store_.stored_result("evidence", key, master.value(), m.template_id)) {
        auto j = nlohmann::json::parse(*kept, nullptr, false);
        auto e = j.is_discarded() ? Result<std::optional<DetectionEvidence>>(Error{ErrorCode::internal, "", "", std::nullopt})
                                  : evidence_from_json(j);
        if (e) {
          out[i] = std::move(e.value());
          ++counts_.evidence_reused;
          continue;
        }
      }
    }
    misses.push_back({i, key, master ? master.value() : std::string(), std::move(files)});
    to_gather.push_back(m);
  }
  if (to_gather.empty()) return out;
  auto gathered = gather_evidence(templates, parts, to_gather, options);
  counts_.evidence_gathered += to_gather.size();
  std::vector<StoredResult> keep;
  for (size_t k = 0; k < misses.size() && k < gathered.size(); ++k) {
    if (!misses[k].key.empty())
      keep.push_back({"evidence", misses[k].key, misses[k].master, matches[misses[k].index].template_id,
                      evidence_to_json(gathered[k]).dump(), misses[k].files});
    out[misses[k].index] = std::move(gathered[k]);
  }
  (void)store_.store_results(keep);  // evidence not kept is gathered again next time
  return out;
}

}  // namespace godwit
