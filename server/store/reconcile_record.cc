#include "reconcile_record.h"

#include <chrono>
#include <cstdio>
#include <ctime>
#include <filesystem>
#include <map>
#include <nlohmann/json.hpp>
#include <random>

#include "file_digest.h"
#include "godwit/report/reconcile_report.h"
#include "godwit/core/version.h"

namespace godwit {
namespace {

namespace fs = std::filesystem;

std::string ranges_json(const std::vector<std::pair<double, double>>& list) {
  nlohmann::json a = nlohmann::json::array();
  for (const auto& [from, to] : list) a.push_back({from, to});
  return a.dump();
}

std::string spans_json(const std::vector<LocalSpan>& list) {
  nlohmann::json a = nlohmann::json::array();
  for (const auto& [from, to] : list) a.push_back({format_iso8601_local(from, 3), format_iso8601_local(to, 3)});
  return a.dump();
}

// Paths as the store keeps them: absolute, so the record means the same
// whatever the working folder of the run was.
std::string absolute_path(const std::string& p) {
  std::error_code ec;
  auto a = fs::absolute(p, ec);
  return ec ? p : a.lexically_normal().string();
}

void file_stamp(const std::string& path, int64_t& size, int64_t& mtime_ns) {
  std::error_code ec;
  const auto s = fs::file_size(path, ec);
  size = ec ? 0 : static_cast<int64_t>(s);
  const auto t = fs::last_write_time(path, ec);
  mtime_ns = ec ? 0
                : static_cast<int64_t>(
                      std::chrono::duration_cast<std::chrono::nanoseconds>(t.time_since_epoch()).count());
}

}  // namespace

std::string make_job_key(const std::string& source) {
  const std::time_t now = std::time(nullptr);
  std::tm tm{};
  gmtime_r(&now, &tm);
  char stamp[32];
  std::strftime(stamp, sizeof stamp, "%Y%m%dT%H%M%SZ", &tm);
  std::random_device rd;
  char tail[16];
  std::snprintf(tail, sizeof tail, "%08x", static_cast<unsigned>(rd()));
  return source + "-" + stamp + "-" + tail;
}

std::string station_from_name(const std::string& path, const std::string& name_pattern) {
  const std::string stem = fs::path(path).stem().string();
  if (!time_from_name(stem, name_pattern)) return "default";
  // The timestamp starts at the last position from which the rest still holds it.
  size_t at = 0;
  for (size_t i = 0; i < stem.size(); ++i)
    if (time_from_name(std::string_view(stem).substr(i), name_pattern)) at = i;
  std::string prefix = stem.substr(0, at);
  while (!prefix.empty() && (prefix.back() == '-' || prefix.back() == '_' || prefix.back() == ' ' || prefix.back() == '.'))
    prefix.pop_back();
  return prefix.empty() ? "default" : prefix;
}

std::string search_options_json(const ReconcileOptions& o) {
  const LocateOptions& l = o.locate;
  nlohmann::json j{{"analysis_rate_hz", l.analysis_rate_hz},
                   {"threshold", l.picker.threshold},
                   {"floor_k", l.picker.floor_k},
                   {"refine", l.refine},
                   {"speed", {{"enabled", l.speed.enabled},
                              {"max_deviation", l.speed.max_deviation},
                              {"max_tempo_deviation", l.speed.max_tempo_deviation}}},
                   {"min_airing_score", o.min_airing_score},
                   {"min_foreground_evidence", o.min_foreground_evidence},
                   {"min_coverage", o.min_coverage},
                   {"max_foreground_deficit", o.max_foreground_deficit},
                   {"version_margin", o.version_margin},
                   {"verify", {{"segment_s", o.verify.segment_s}, {"min_segment_score", o.verify.min_segment_score},
                               {"relative", o.verify.relative}}}};
  return j.dump();  // keys sorted: canonical
}

JobRecord job_record(const ReconcileResult& r, const ReconcileOptions& options, const RecordContext& c,
                     RecordStore* store) {
  JobRecord job;
  job.station = c.station;
  if (job.station.empty())
    job.station = r.recordings.empty() ? "default" : station_from_name(r.recordings.front().path, options.name_pattern);
  job.time_zone = c.time_zone;
  job.key = c.key.empty() ? make_job_key(c.source) : c.key;
  job.source = c.source;
  job.schedule = c.schedule;
  job.software = godwit_version();
  job.options_json = search_options_json(options);
  job.options_sha256 = sha256_hex(job.options_json);
  job.finished_utc = static_cast<int64_t>(std::time(nullptr));

  for (const auto& s : r.recordings) {
    RecordingRow row;
    row.path = absolute_path(s.path);
    file_stamp(s.path, row.size_bytes, row.mtime_ns);
    std::optional<std::string> known;
    if (store && row.size_bytes > 0) known = store->known_sha256(job.station, row.path, row.size_bytes, row.mtime_ns);
    if (known) {
      row.sha256 = *known;
    } else if (auto h = store ? store->file_digest(s.path) : file_sha256(s.path)) {
      row.sha256 = h.value();
    }
    row.start_local = s.start_s;
    row.duration_s = s.duration_s;
    row.rate_hz = s.native_rate_hz;
    row.codec = s.format;
    row.channels = s.channels;
    if (s.error) row.error = s.error->describe();
    job.recordings.push_back(std::move(row));  // r.recordings' places: an airing's recording_id

  }
  for (const auto& [spot, info] : r.spots) {
    MasterRow m;
    m.spot = spot;
    m.path = absolute_path(info.path);
    // Kept by stat (file_digests): a library is not read again for every day.
    if (auto h = store ? store->file_digest(info.path) : file_sha256(info.path)) m.sha256 = h.value();
    m.title = info.meta.title;
    m.advertiser = info.meta.advertiser;
    m.family = info.meta.family;
    m.length_s = info.length_s;
    job.masters.push_back(std::move(m));
  }
  std::vector<bool> unscheduled(r.airings.size(), false);
  for (size_t i : r.unscheduled)
    if (i < unscheduled.size()) unscheduled[i] = true;
  std::vector<std::optional<size_t>> detection_of(r.airings.size());
  std::map<RecordingId, size_t> extra_recording;
  for (size_t i = 0; i < r.airings.size(); ++i) {
    const AiringRecord& a = r.airings[i];
    if (!r.spots.count(a.spot)) continue;  // a master the job does not name: nothing to key it by
    // A recording the result does not list (a result made elsewhere): a row
    // of its own, one per place.
    auto rec = extra_recording.find(a.recording_id);
    if (a.recording_id.index >= r.recordings.size() && rec == extra_recording.end()) {
      RecordingRow row;
      row.path = absolute_path(a.recording);
      rec = extra_recording.emplace(a.recording_id, job.recordings.size()).first;
      job.recordings.push_back(std::move(row));
    }
    DetectionRow d;
    d.recording = a.recording_id.index < r.recordings.size() ? a.recording_id.index : rec->second;
    d.spot = a.spot;
    d.offset_s = a.offset_s;
    d.aired_local = a.aired_s;
    d.score = a.score;
    d.polarity = a.polarity;
    d.speed = a.speed;
    d.tempo = a.tempo;
    d.coverage = a.coverage;
    d.length_s = a.length_s;
    d.foreground_contrast = a.foreground_contrast;
    d.spot_lufs = a.spot_lufs;
    d.programme_lufs = a.programme_lufs;
    d.missing_json = ranges_json(a.missing_s);
    d.unrecorded_json = ranges_json(a.unrecorded_s);
    nlohmann::json versions = nlohmann::json::array();
    for (const auto& v : a.versions) versions.push_back({{"spot", v.spot}, {"score", v.score}});
    d.versions_json = versions.dump();
    d.undetermined_json = nlohmann::json(a.undetermined_among).dump();
    nlohmann::json prof{{"segment_s", a.profile.segment_s}, {"scores", a.profile.scores}};
    d.profile_json = prof.dump();
    d.unscheduled = unscheduled[i];
    detection_of[i] = job.detections.size();
    job.detections.push_back(std::move(d));
  }
  nlohmann::json summary = nlohmann::json::object();
  for (VerdictStatus st : all_verdicts()) summary[verdict_name(st)] = 0;
  for (const auto& v : r.verdicts) {
    if (v.placement >= r.placements.size()) continue;
    const Placement& p = r.placements[v.placement];
    PlacementRow row;
    row.slot = p.slot;
    row.spot = p.spot;
    if (auto it = r.spots.find(p.spot); it != r.spots.end()) {
      row.advertiser = it->second.meta.advertiser;
      row.title = it->second.meta.title;
    }
    row.planned_local = p.planned_s;
    row.planned = p.planned;
    row.window_s = p.window_s;
    row.status = verdict_name(v.status);
    summary[row.status] = summary[row.status].get<int>() + 1;
    if (v.airing && *v.airing < r.airings.size()) {
      row.deviation_s = v.deviation_s;
      row.detection = detection_of[*v.airing];
      row.detected_spot = reported_spot(r.airings[*v.airing], p);
    }
    row.recorded_json = spans_json(v.recorded);
    row.unrecorded_json = spans_json(v.unrecorded);
    row.suggestion = v.suggestion;
    job.placements.push_back(std::move(row));
  }
  summary["unscheduled"] = r.unscheduled.size();
  job.summary_json = summary.dump();
  return job;
}

Status record_reconcile(RecordStore& store, const ReconcileResult& r, const ReconcileOptions& options,
                        const RecordContext& context) {
  return store.write_job(job_record(r, options, context, &store));
}

}  // namespace godwit

namespace godwit {

Status record_reconcile_in(const std::string& state_dir, const ReconcileResult& r, const ReconcileOptions& options,
                           const RecordContext& context) {
  auto store = RecordStore::open(state_dir);
  if (!store) return store.error();
  return record_reconcile(*store.value(), r, options, context);
}

}  // namespace godwit
