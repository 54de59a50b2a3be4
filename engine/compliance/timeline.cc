#include "godwit/compliance/timeline.h"

#include <algorithm>

namespace godwit {

const char* timeline_issue_name(TimelineIssue::Kind kind) {
  switch (kind) {
    case TimelineIssue::Kind::gap: return "gap";
    case TimelineIssue::Kind::overlap: return "overlap";
  }
  return "gap";
}

Timeline build_timeline(std::vector<TimelineFile> files, double tolerance_s) {
  std::stable_sort(files.begin(), files.end(),
                   [](const TimelineFile& a, const TimelineFile& b) { return a.start_s < b.start_s; });
  Timeline t;
  for (auto& f : files) {
    if (t.runs.empty()) {
      t.runs.push_back({{f}});
      continue;
    }
    const TimelineFile& prev = t.runs.back().files.back();
    const LocalSeconds prev_end = prev.start_s + prev.duration_s;
    const double delta = f.start_s - prev_end;  // > 0 gap, < 0 overlap
    if (delta > tolerance_s) {
      t.issues.push_back({TimelineIssue::Kind::gap, prev.path, f.path, prev_end, delta});
      t.runs.push_back({{f}});
      continue;
    }
    if (delta < -tolerance_s) {
      t.issues.push_back({TimelineIssue::Kind::overlap, prev.path, f.path, f.start_s, -delta});
      f.skip_s = std::min(-delta, f.duration_s);
    }
    t.runs.back().files.push_back(f);
  }
  return t;
}

}  // namespace godwit
