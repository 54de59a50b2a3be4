// AnalysisStream: an AudioSource seen at the analysis rate.
//
// Pulls native frames from the source block by block and resamples them;
// memory does not grow with the length of the recording. When the source
// fails part way, `next()` returns the error once; samples delivered before
// remain valid, and the stream is over.
//
// Thread contract: one per stream; not safe for concurrent use.
#pragma once

#include "godwit/audio/audio_source.h"
#include "godwit/audio/resampler.h"

namespace godwit {

class AnalysisStream {
 public:
  // REQUIRES: source != nullptr, analysis_rate_hz > 0.
  AnalysisStream(AudioSource& source, double analysis_rate_hz, size_t block_frames = 1 << 16);

  // Replaces `out` with the next analysis-rate samples (possibly none while
  // the filter fills). Returns false at the end of the stream. On an error
  // `out` still holds the last samples decoded before the failure: consume
  // them, then stop.
  Result<bool> next(Samples& out);

  // Native frames read so far.
  int64_t native_frames_read() const { return native_read_; }
  // Wall time spent decoding (the source's reads, downmix included) and
  // resampling so far.
  double decode_s() const { return decode_s_; }
  double resample_s() const { return resample_s_; }

 private:
  AudioSource& source_;
  Resampler resampler_;
  Samples native_;
  int64_t native_read_ = 0;
  bool done_ = false;
  double decode_s_ = 0, resample_s_ = 0;
};

// Mono native frames [start, start + frames) of `source`; frames before 0
// (the recording had not begun) are zeros; fewer when the source ends or
// fails first.
Samples read_native_span(AudioSource& source, int64_t start, size_t frames);

// Decodes a whole (short) source to mono at `rate_hz` (the native rate when
// rate_hz <= 0). For masters; errors as AudioSource::read.
Result<Samples> decode_all(AudioSource& source, double rate_hz);

}  // namespace godwit
