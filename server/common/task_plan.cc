#include "task_plan.h"

#include <algorithm>
#include <cmath>
#include <cstdio>
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

std::vector<PlannedTask> plan_tasks(const std::string& job_id, const SegmentSpec& base,
                                    const std::vector<Stream>& streams, const std::vector<std::string>& templates,
                                    double margin_s, const PlanOptions& options) {
  std::vector<PlannedTask> out;
  const size_t batch = std::max<size_t>(1, options.templates_per_task);
  for (size_t s = 0; s < streams.size(); ++s) {
    for (const Segment& seg : split_stream(streams[s], options.span_s, margin_s)) {
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
    for (size_t k = 0; k < r.value().matches.size(); ++k)
      found.push_back({std::move(r.value().matches[k]), s, i, ev ? (*ev)[k] : nlohmann::json()});
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
