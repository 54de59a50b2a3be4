// Timeline: consecutive airchecks of one station on the wall clock.
//
// Each file has a start (from its name or given) and a duration. Sorted by
// start, consecutive files whose boundary lies within `tolerance_s` of each
// other form a run: a run is searched as one continuous stream, so a spot
// that straddles the boundary between two hour files is found. A larger gap
// ends the run and is reported; an overlap is reported too, and the later
// file's first `overlap_s` are skipped so no audio is searched twice.
//
// Thread contract: plain functions and values.
#pragma once

#include <string>
#include <utility>
#include <vector>

#include "godwit/compliance/civil_time.h"
#include "godwit/search/recording_id.h"

namespace godwit {

struct TimelineFile {
  std::string path;
  LocalSeconds start_s = 0;
  double duration_s = 0;
  double native_rate_hz = 0;
  double skip_s = 0;  // leading audio already covered by the previous file
  RecordingId recording;  // which of the job's recordings it is (the path may repeat)
};

struct TimelineRun {
  std::vector<TimelineFile> files;  // consecutive; rates and codecs may differ
  LocalSeconds start_s() const { return files.front().start_s + files.front().skip_s; }
  double duration_s() const {
    double d = 0;
    for (const auto& f : files) d += f.duration_s - f.skip_s;
    return d;
  }
  // Where `t_s` seconds into the run's stream lies: file index and seconds
  // from that file's own start (negative before the first file began,
  // beyond its length after the last one ended).
  std::pair<size_t, double> locate_s(double t_s) const {
    size_t i = 0;
    for (; i + 1 < files.size(); ++i) {
      const double len = files[i].duration_s - files[i].skip_s;
      if (t_s < len) break;
      t_s -= len;
    }
    return {i, files[i].skip_s + t_s};
  }
};

struct TimelineIssue {
  enum class Kind { gap, overlap };
  Kind kind = Kind::gap;
  std::string before;  // file that ends
  std::string after;   // file that starts
  LocalSeconds at_s = 0;
  double seconds = 0;  // length of the gap or overlap
};

struct Timeline {
  std::vector<TimelineRun> runs;
  std::vector<TimelineIssue> issues;
};

// Default tolerance: 0.5 s (a logger's file boundaries jitter by a few
// hundred milliseconds; common practice, not a standard).
Timeline build_timeline(std::vector<TimelineFile> files, double tolerance_s = 0.5);

const char* timeline_issue_name(TimelineIssue::Kind kind);

}  // namespace godwit
