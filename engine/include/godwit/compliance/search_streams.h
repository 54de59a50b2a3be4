// SearchStreams: what the search of a reconcile or timeline locate job
// reads, and under which names.
//
// Such a job searches streams, not files: each run of consecutive
// recordings (timeline.h) is one stream (ConcatSource), and a file that
// cannot be read whole is searched alone. run_locate knows a stream by the
// name it was given (LocateJob::recordings) and reports its matches and
// its errors under that name. This table is the one place that gives the
// names and reads them back, by lookup among the names it gave: a run is a
// RunId, never a string parsed back. A run's name ("run:0") is chosen not
// to equal any file searched alone.
//
// Thread contract: a value; immutable once built.
#pragma once

#include <cstddef>
#include <map>
#include <optional>
#include <string>
#include <vector>

#include "godwit/audio/audio_source.h"
#include "godwit/compliance/timeline.h"

namespace godwit {

// A run of a timeline: its index in Timeline::runs.
struct RunId {
  size_t index = 0;
  friend bool operator==(RunId, RunId) = default;
};

class SearchStreams {
 public:
  SearchStreams() = default;
  // The files of `alone` (each searched on its own), then every run of
  // `timeline`, in that order.
  SearchStreams(const Timeline& timeline, std::vector<std::string> alone);

  // What the search is given, in search order.
  const std::vector<std::string>& names() const { return names_; }
  size_t runs() const { return run_names_.size(); }
  const std::string& name(RunId run) const { return run_names_.at(run.index); }
  // The run a stream of the search stands for; empty for a file searched
  // alone or a name this table did not give.
  std::optional<RunId> run_of(const std::string& name) const;
  // An opener that reads each run's name as the run's files in one stream
  // (ConcatSource) and anything else through `base`. `timeline` must be
  // the one the table was made from and outlive the opener.
  SourceOpener opener(const Timeline& timeline, SourceOpener base) const;

 private:
  std::vector<std::string> names_;
  std::vector<std::string> run_names_;
  std::map<std::string, size_t> run_of_;
};

}  // namespace godwit
