// SearchStreams: what the search of a reconcile or timeline locate job
// reads, and under which names.
//
// Such a job searches streams, not files: each run of consecutive
// recordings (timeline.h) is one stream (ConcatSource), and a file that
// cannot be read whole is searched alone. run_locate is given the streams'
// names (LocateJob::recordings = names()) and reports each match and each
// error against the stream's place in that list (Match::recording_id,
// LocateResult::recordings): this table reads the places back, as runs
// (RunId) and as the job's recordings searched alone (RecordingId), never
// from the names. The names are for opening: a run's ("run:0") is chosen
// not to equal any file searched alone.
//
// Thread contract: a value; immutable once built.
#pragma once

#include <cstddef>
#include <optional>
#include <string>
#include <vector>

#include "godwit/audio/audio_source.h"
#include "godwit/compliance/run_id.h"
#include "godwit/compliance/timeline.h"
#include "godwit/search/recording_id.h"

namespace godwit {

class SearchStreams {
 public:
  // A recording of the job searched on its own, under its path.
  struct Alone {
    RecordingId recording;
    std::string path;
  };

  SearchStreams() = default;
  // The files of `alone` (each searched on its own), then every run of
  // `timeline`, in that order.
  SearchStreams(const Timeline& timeline, std::vector<Alone> alone);

  // What the search is given, in search order: a stream of the search is
  // its place here (the search's RecordingId).
  const std::vector<std::string>& names() const { return names_; }
  size_t runs() const { return names_.size() - alone_.size(); }
  const std::string& name(RunId run) const { return names_.at(stream(run).index); }
  // The stream that searches `run`.
  RecordingId stream(RunId run) const { return RecordingId{alone_.size() + run.index}; }
  // The run a stream of the search stands for; empty for a file searched
  // alone or a place beyond the search.
  std::optional<RunId> run_of(RecordingId stream) const;
  // The job's recording a stream searched alone is; empty for a run.
  std::optional<RecordingId> alone_of(RecordingId stream) const;
  // An opener that reads each run's name as the run's files in one stream
  // (ConcatSource) and anything else through `base`. `timeline` must be
  // the one the table was made from and outlive the opener. (Openers are
  // asked by name: this is the one place a name is looked up, among the
  // names this table gave.)
  SourceOpener opener(const Timeline& timeline, SourceOpener base) const;

 private:
  std::vector<std::string> names_;
  std::vector<RecordingId> alone_;  // the job's recording of each stream searched alone
};

}  // namespace godwit
