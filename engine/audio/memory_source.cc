#include "godwit/audio/memory_source.h"

#include <algorithm>

namespace godwit {

MemorySource::MemorySource(std::string path, Samples interleaved, int channels, double rate_hz,
                           ChannelChoice choice)
    : data_(std::move(interleaved)), channels_(std::max(1, channels)), choice_(choice) {
  frames_ = static_cast<int64_t>(data_.size() / static_cast<size_t>(channels_));
  info_.path = std::move(path);
  info_.format = "memory";
  info_.native_rate_hz = rate_hz;
  info_.channels = channels_;
  info_.native_frames = frames_;
}

Result<size_t> MemorySource::read(float* out, size_t max_frames) {
  int64_t limit = frames_;
  if (fail_at_frame_) {
    if (pos_ >= *fail_at_frame_)
      return Error{ErrorCode::corrupt, "decoding failed: injected fault", info_.path,
                   static_cast<double>(pos_) / info_.native_rate_hz};
    limit = std::min(limit, *fail_at_frame_);
  }
  const int64_t n = std::min<int64_t>(static_cast<int64_t>(max_frames), limit - pos_);
  const size_t ch = static_cast<size_t>(channels_);
  for (int64_t i = 0; i < n; ++i) {
    const size_t base = static_cast<size_t>(pos_ + i) * ch;
    if (choice_.channel >= 0) {
      out[i] = data_[base + static_cast<size_t>(choice_.channel)];
    } else {
      float s = 0;
      for (size_t c = 0; c < ch; ++c) s += data_[base + c];
      out[i] = s / static_cast<float>(ch);
    }
  }
  pos_ += std::max<int64_t>(0, n);
  return static_cast<size_t>(std::max<int64_t>(0, n));
}

Result<size_t> MemorySource::read_interleaved(float* out, size_t max_frames) {
  const int64_t n = std::min<int64_t>(static_cast<int64_t>(max_frames), frames_ - pos_);
  const size_t ch = static_cast<size_t>(channels_);
  std::copy_n(data_.data() + static_cast<size_t>(pos_) * ch, static_cast<size_t>(std::max<int64_t>(0, n)) * ch, out);
  pos_ += std::max<int64_t>(0, n);
  return static_cast<size_t>(std::max<int64_t>(0, n));
}

Status MemorySource::seek(int64_t frame) {
  if (frame < 0 || frame > frames_)
    return Error{ErrorCode::usage, "seek beyond the end", info_.path, std::nullopt};
  pos_ = frame;
  return ok_status();
}

}  // namespace godwit
