// Segments: the part of a stream that one task of a distributed job
// searches, and how a worker searches it.
//
// A stream is what one search reads in a single process: a recording, or a
// reconcile run of consecutive files (ConcatSource). A long stream is split
// into segments that each own `span_s` of it (an hour by default): a task
// reports the detections whose offset lies in the part it owns, and reads
// `margin_s` more on either side, so that an airing starting near the end of
// its part is seen whole and the noise floor and peak suppression around
// it see what one process sees. Reads start on multiples of 64 s, where the
// analysis at 8 kHz (floor segments of 4096 samples, spectral frames of 400
// and 160 samples) lines up with the whole stream's.
//
// Thread contract: plain functions and values.
#pragma once

#include <limits>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "godwit/audio/concat_source.h"
#include "godwit/search/job.h"
#include "godwit/compliance/reconcile_job.h"

namespace godwit {

struct Stream {
  std::string name;               // a recording's path, or a run's name (SearchStreams)
  std::vector<ConcatPart> parts;  // empty: `name` is a file read whole, never split
  double rate_hz = 0;             // native
  double duration_s = 0;
};

struct Segment {
  Stream stream;
  double read_from_s = 0;  // stream time the task starts reading at
  double read_to_s = std::numeric_limits<double>::infinity();
  double own_from_s = -std::numeric_limits<double>::infinity();  // it reports offsets in [own_from_s, own_to_s)
  double own_to_s = std::numeric_limits<double>::infinity();
};

// Reads start on multiples of this (see above).
constexpr double kSegmentAlignS = 64;

// One segment for a stream without parts or not longer than 1.5 spans;
// else one per span (a last piece under a quarter span joins the one
// before). `margin_s`: the longest airing (master / lowest speed) plus the
// floor's and suppression's reach.
std::vector<Segment> split_stream(const Stream& stream, double span_s, double margin_s);

// The parts of the stream's frames [from, to).
std::vector<ConcatPart> window_parts(const std::vector<ConcatPart>& parts, double stream_rate_hz, int64_t from_frame,
                                     int64_t to_frame);

nlohmann::json segment_to_json(const Segment& s);
Result<Segment> segment_from_json(const nlohmann::json& j);

// Searches the segment for `templates`: the result names the stream, its
// offsets are in stream time, only owned matches are kept, and the
// recording's duration_s is how far into the stream the task decoded.
Result<LocateResult> search_segment(const Segment& segment, const std::vector<std::string>& templates,
                                    LocateOptions options);

// A reconcile task's evidence of one detection (null: it could not be
// verified), exact numbers.
nlohmann::json evidence_to_json(const std::optional<DetectionEvidence>& e);
Result<std::optional<DetectionEvidence>> evidence_from_json(const nlohmann::json& j);

}  // namespace godwit
