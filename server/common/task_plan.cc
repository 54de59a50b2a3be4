#include "task_plan.h"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <limits>
#include <map>

#include "godwit/report/locate_report.h"
#include "json_text.h"

namespace godwit {
namespace {

std::string fnv1a_hex(const std::string& s) {
  uint64_t h = 1469598103934665603ull;
  for (unsigned char c : s) {
    h ^= c;
    h *= 1099511628211ull;
  }
  char b[17];
  std::snprintf(b, sizeof b, "%016llx", static_cast<unsigned long long>(h));
  return b;
}

struct Found {
  Match match;
  size_t stream = 0;
  size_t task = 0;
  nlohmann::json evidence;
};

}  // namespace

double segment_margin_s(const std::vector<std::string>& templates, double max_speed_change_pct) {
  double longest_s = 0;
  for (const auto& t : templates) {
    auto src = open_audio_file(t);
    // A master whose length is not stated: assume a long one.
    const double d = src ? src.value()->info().duration_s().value_or(300.0) : 0.0;
    longest_s = std::max(longest_s, d);
  }
  return longest_s / (1 - std::min(max_speed_change_pct, 50.0) / 100) + 12;
}

std::vector<Segment> split_at_files(const Stream& stream, double margin_s, double span_s) {
  if (stream.parts.empty() || !(stream.rate_hz > 0)) return {Segment{stream}};
  constexpr double kInf = std::numeric_limits<double>::infinity();
  // Where each file ends, in stream seconds (as window_parts counts frames).
  std::vector<double> ends_s;
  int64_t at = 0;
  for (const auto& p : stream.parts) {
    const double own_per_stream = (p.rate_hz > 0 ? p.rate_hz : stream.rate_hz) / stream.rate_hz;
    at += std::max<int64_t>(0, std::llround(static_cast<double>(p.frames - p.skip_frames) / own_per_stream));
    ends_s.push_back(static_cast<double>(at) / stream.rate_hz);
  }
  const double total_s = ends_s.back();
  // An airing owned up to `m` before a meeting point ends within the piece
  // around it; after the point, that piece owns only the lead, which the
  // next body reads before what it owns.
  const double m = margin_s, lead = std::min(kPieceLeadS, m);
  std::vector<std::pair<double, double>> zones{{-kInf, lead}};
  for (size_t i = 0; i + 1 < ends_s.size(); ++i) zones.push_back({ends_s[i] - m, ends_s[i] + lead});
  zones.push_back({total_s - m, kInf});
  std::vector<std::pair<double, double>> merged;
  for (const auto& z : zones) {
    if (!merged.empty() && z.first <= merged.back().second) merged.back().second = std::max(merged.back().second, z.second);
    else merged.push_back(z);
  }
  std::vector<Segment> out;
  auto add = [&](double from_s, double to_s) {
    Segment s{stream};
    s.own_from_s = from_s;
    s.own_to_s = to_s;
    // Reads start on the kSegmentAlignS grid of the file they start in, so
    // a piece reads a file at the phase one process reads it at when files
    // start on whole seconds (segment_task.h).
    s.read_from_s = 0;
    if (std::isfinite(from_s) && from_s - lead > 0) {
      const double want_s = from_s - lead;
      double file_start_s = 0;
      for (double end_s : ends_s) {
        if (end_s > want_s) break;
        file_start_s = end_s;
      }
      s.read_from_s = file_start_s + std::floor((want_s - file_start_s) / kSegmentAlignS) * kSegmentAlignS;
    }
    s.read_to_s = std::isfinite(to_s) && to_s + m < total_s ? to_s + m : kInf;
    out.push_back(std::move(s));
  };
  // A file's body, in spans of span_s from its start when it is long.
  auto add_body = [&](double from_s, double to_s) {
    const double len_s = to_s - from_s;
    if (!(span_s > 0) || !std::isfinite(span_s) || len_s <= 1.5 * span_s) return add(from_s, to_s);
    size_t pieces = static_cast<size_t>(std::ceil(len_s / span_s));
    if (pieces > 1 && len_s - static_cast<double>(pieces - 1) * span_s < 0.25 * span_s) --pieces;
    for (size_t k = 0; k < pieces; ++k)
      add(from_s + static_cast<double>(k) * span_s, k + 1 == pieces ? to_s : from_s + static_cast<double>(k + 1) * span_s);
  };
  for (size_t k = 0; k < merged.size(); ++k) {
    add(merged[k].first, merged[k].second);
    if (k + 1 < merged.size()) add_body(merged[k].second, merged[k + 1].first);
  }
  return out;
}

std::vector<PlannedTask> plan_tasks(const std::string& job_id, const SegmentSpec& base,
                                    const std::vector<Stream>& streams, const std::vector<std::string>& templates,
                                    double margin_s, const PlanOptions& options) {
  std::vector<PlannedTask> out;
  const size_t batch = std::max<size_t>(1, options.templates_per_task);
  for (size_t s = 0; s < streams.size(); ++s) {
    const auto segments =
        options.at_files ? split_at_files(streams[s], margin_s, options.span_s) : split_stream(streams[s], options.span_s, margin_s);
    for (const Segment& seg : segments) {
      for (size_t first = 0; first < templates.size(); first += batch) {
        SegmentSpec task = base;
        task.segment = seg;
        task.templates = std::vector<std::string>(
            templates.begin() + static_cast<long>(first),
            templates.begin() + static_cast<long>(std::min(templates.size(), first + batch)));
        nlohmann::json spec = job_spec_to_json(task);
        // The place in the plan: a recording listed twice is searched twice.
        PlannedTask t;
        t.id = fnv1a_hex(job_id + "\n" + std::to_string(out.size()) + "\n" + json_text(spec));
        t.spec = std::move(spec);
        t.stream = s;
        out.push_back(std::move(t));
      }
    }
  }
  return out;
}

Result<MergedSearch> merge_results(const std::vector<Stream>& streams, const std::vector<std::string>& templates,
                                   const std::vector<PlannedTask>& tasks, const std::vector<nlohmann::json>& results) {
  auto internal = [](const std::string& m) { return Error{ErrorCode::internal, "merge: " + m, "", std::nullopt}; };
  if (tasks.size() != results.size()) return internal("task and result counts differ");
  LocateResult out;
  out.analysis_rate_hz = 8000;
  std::map<std::string, TemplateReport> template_by_path;
  std::vector<std::optional<RecordingReport>> recs(streams.size());
  std::vector<Found> found;
  for (size_t i = 0; i < results.size(); ++i) {
    auto r = locate_from_json(results[i]);
    if (!r) return internal("the result of task " + tasks[i].id + " is not a locate document");
    const size_t s = tasks[i].stream;
    if (s >= streams.size()) return internal("task " + tasks[i].id + " names no stream of the plan");
    if (r.value().recordings.size() > 1) return internal("task " + tasks[i].id + " reports more than its stream");
    out.analysis_rate_hz = r.value().analysis_rate_hz;
    for (auto& t : r.value().templates) template_by_path.emplace(t.path, std::move(t));
    for (auto& rec : r.value().recordings) {
      auto& have = recs[s];
      if (!have) {
        have = std::move(rec);
        continue;
      }
      have->duration_s = std::max(have->duration_s, rec.duration_s);
      const double at = rec.error && rec.error->offset_s ? *rec.error->offset_s : 0;
      if (rec.error && (!have->error || at < have->error->offset_s.value_or(0))) have->error = rec.error;
    }
    const nlohmann::json* ev = results[i].contains("evidence") ? &results[i]["evidence"] : nullptr;
    if (ev && (!ev->is_array() || ev->size() != r.value().matches.size()))
      return internal("task " + tasks[i].id + " gives evidence for other matches than its own");
    for (size_t k = 0; k < r.value().matches.size(); ++k) {
      Match& m = r.value().matches[k];
      m.recording_id = RecordingId{s};  // the stream its task searched, whatever it is called
      found.push_back({std::move(m), s, i, ev ? (*ev)[k] : nlohmann::json()});
    }
  }
  for (const auto& path : templates) {
    if (tasks.empty()) break;  // nothing searched (a reconcile job whose recordings all failed)
    auto it = template_by_path.find(path);
    if (it == template_by_path.end()) return internal("no task reports master " + path);
    out.templates.push_back(it->second);
  }
  for (size_t s = 0; s < streams.size(); ++s) {
    if (!recs[s]) recs[s] = RecordingReport{streams[s].name, "", 0, streams[s].rate_hz, 0, std::nullopt};
    out.recordings.push_back(std::move(*recs[s]));
  }
  std::map<std::string, double> length_s;
  for (const auto& t : out.templates) length_s[t.id] = t.duration_s;
  // By stream and template, then offset: a detection seen by two tasks of
  // neighbouring segments, within one airing of itself, is kept once.
  std::stable_sort(found.begin(), found.end(), [](const Found& a, const Found& b) {
    if (a.stream != b.stream) return a.stream < b.stream;
    if (a.match.template_id != b.match.template_id) return a.match.template_id < b.match.template_id;
    return a.match.offset_s < b.match.offset_s;
  });
  std::vector<Found> kept;
  for (auto& f : found) {
    if (!kept.empty()) {
      Found& last = kept.back();
      const double reach_s = length_s[f.match.template_id] / std::max(f.match.speed, last.match.speed);
      if (last.stream == f.stream && last.match.template_id == f.match.template_id && last.task != f.task &&
          f.match.offset_s - last.match.offset_s < reach_s) {
        if (std::fabs(f.match.score) > std::fabs(last.match.score)) last = std::move(f);
        continue;
      }
    }
    kept.push_back(std::move(f));
  }
  std::stable_sort(kept.begin(), kept.end(), [](const Found& a, const Found& b) {
    if (a.stream != b.stream) return a.stream < b.stream;
    if (a.match.offset_s != b.match.offset_s) return a.match.offset_s < b.match.offset_s;
    return a.match.template_id < b.match.template_id;
  });
  MergedSearch merged;
  for (auto& f : kept) {
    out.matches.push_back(std::move(f.match));
    merged.evidence.push_back(std::move(f.evidence));
  }
  merged.search = std::move(out);
  return merged;
}

}  // namespace godwit
