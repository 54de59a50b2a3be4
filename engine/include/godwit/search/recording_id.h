// RecordingId: which recording of a locate job a result belongs to.
//
// A recording is its place in the job's list (LocateJob::recordings, in
// the order given), which is also its place in LocateResult::recordings.
// The path is for people (reports, JSON, CSV) and for opening the file;
// it is no identity: the same file may be given twice, under one spelling
// or two, and a stream of a plan's search is named, not a file
// (search_streams.h). Code that asks "which recording" compares these.
//
// Thread contract: a value.
#pragma once

#include <compare>
#include <cstddef>

namespace godwit {

struct RecordingId {
  size_t index = 0;
  friend auto operator<=>(RecordingId, RecordingId) = default;
};

}  // namespace godwit
