// RateAdapter: an AudioSource read at another rate than its own.
//
// What a timeline run needs when consecutive files were logged at different
// rates (a 44.1 kHz MP3 followed by a 48 kHz FLAC): each file is read at the
// run's rate through libsoxr (resampler.h), mono or every channel. A seek
// lands on the nearest input frame (within half an input frame of the
// requested time) and restarts the filters; so does a switch between mono
// and interleaved reads.
//
// Thread contract: one per stream.
#pragma once

#include <optional>
#include <vector>

#include "godwit/audio/audio_source.h"
#include "godwit/audio/resampler.h"

namespace godwit {

class RateAdapter final : public AudioSource {
 public:
  RateAdapter(SourcePtr inner, double out_rate_hz);

  const AudioInfo& info() const override { return info_; }
  Result<size_t> read(float* out, size_t max_frames) override;
  Result<size_t> read_interleaved(float* out, size_t max_frames) override;
  Status seek(int64_t frame) override;
  int64_t position_frames() const override { return pos_; }

 private:
  Result<size_t> read_impl(float* out, size_t max_frames, bool interleaved);
  void make_resamplers(size_t channels);
  SourcePtr inner_;
  AudioInfo info_;
  double in_rate_hz_;
  std::vector<std::unique_ptr<Resampler>> resamplers_;  // one per channel read
  std::vector<Samples> pending_;                        // resampled, not yet returned, per channel
  std::vector<float> in_buf_;
  int64_t pos_ = 0;
  bool ended_ = false;
  int mode_ = 0;  // 0 none yet, 1 mono, 2 interleaved
  int64_t drop_ = 0;  // output frames still to drop after a seek
  // Reads and resamples one more block; false at the end or on error (kept in error_).
  bool refill(size_t width, bool interleaved, size_t max_frames);
  std::optional<Error> error_;
};

}  // namespace godwit
