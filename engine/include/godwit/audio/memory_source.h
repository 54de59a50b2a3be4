// MemorySource: an AudioSource over samples held in memory.
//
// For tests and for audio that arrives inline (not from a file). Can inject
// a decode failure at a chosen frame, to exercise "broke mid-stream" paths
// through the same seam a real file uses.
//
// Thread contract: one per stream; not safe for concurrent use.
#pragma once

#include <optional>

#include "godwit/audio/audio_source.h"
#include "godwit/core/types.h"

namespace godwit {

class MemorySource final : public AudioSource {
 public:
  // `interleaved` holds `channels` interleaved channels at `rate_hz`.
  MemorySource(std::string path, Samples interleaved, int channels, double rate_hz,
               ChannelChoice choice = {});
  // After `frame` frames have been read, every further read fails with
  // `corrupt`. `hide_length` makes info().native_frames empty, as for a
  // stream whose length is not known up front.
  void fail_at(int64_t frame) { fail_at_frame_ = frame; }
  void hide_length() { info_.native_frames.reset(); }

  const AudioInfo& info() const override { return info_; }
  Result<size_t> read(float* out, size_t max_frames) override;
  Status seek(int64_t frame) override;
  Result<size_t> read_interleaved(float* out, size_t max_frames) override;
  int64_t position_frames() const override { return pos_; }

 private:
  AudioInfo info_;
  Samples data_;
  int channels_;
  ChannelChoice choice_;
  int64_t frames_;
  int64_t pos_ = 0;
  std::optional<int64_t> fail_at_frame_;
};

}  // namespace godwit
