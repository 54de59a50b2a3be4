#include "programme_source.h"

#include <algorithm>

#include "synth.h"

namespace godwit::synth {

ProgrammeSource::ProgrammeSource(std::string path, double rate_hz, double duration_s, uint64_t seed,
                                 std::vector<PlantedClip> plants, Content content,
                                 std::shared_ptr<const SegmentPool> pool)
    : seed_(seed), content_(content), plants_(std::move(plants)), pool_(std::move(pool)) {
  info_.path = std::move(path);
  info_.format = "synthetic";
  info_.native_rate_hz = rate_hz;
  info_.channels = 1;
  total_ = static_cast<int64_t>(duration_s * rate_hz);
  info_.native_frames = total_;
}

void ProgrammeSource::fill_segment_containing(int64_t frame) {
  const int64_t seg_len = static_cast<int64_t>(kSegmentSeconds * info_.native_rate_hz);
  const int64_t index = frame / seg_len;
  seg_start_ = index * seg_len;
  const uint64_t s = seed_ * 1000003 + static_cast<uint64_t>(index);
  if (content_ == Content::programme && pool_ && !pool_->segments.empty()) {
    Rng pick(s);
    seg_ = pool_->segments[pick.next() % pool_->segments.size()];
  } else if (content_ == Content::programme) {
    seg_ = (index % 3 == 1) ? voice(kSegmentSeconds, info_.native_rate_hz, s) : music(kSegmentSeconds, info_.native_rate_hz, s);
    set_rms(seg_, 0.09);
  } else {
    // Digital silence, dither, dropouts and single-sample spikes.
    seg_.assign(static_cast<size_t>(seg_len), 0.0f);
    Rng rng(s);
    if (index % 2 == 0) seg_ = white_noise(static_cast<size_t>(seg_len), 2e-5, s);
    for (int k = 0; k < 5; ++k) seg_[static_cast<size_t>(rng.uniform() * static_cast<double>(seg_len))] = rng.uniform() < 0.5 ? 1.0f : -1.0f;
  }
  seg_.resize(static_cast<size_t>(seg_len), 0.0f);
  for (const auto& p : plants_) {
    const int64_t a = std::max(p.offset_frames, seg_start_);
    const int64_t b = std::min<int64_t>(p.offset_frames + static_cast<int64_t>(p.clip->size()), seg_start_ + seg_len);
    for (int64_t f = a; f < b; ++f)
      seg_[static_cast<size_t>(f - seg_start_)] = p.gain * (*p.clip)[static_cast<size_t>(f - p.offset_frames)];
  }
}

std::shared_ptr<const SegmentPool> make_segment_pool(double rate_hz, size_t count, uint64_t seed) {
  auto pool = std::make_shared<SegmentPool>();
  pool->rate_hz = rate_hz;
  for (size_t i = 0; i < count; ++i) {
    const double len_s = 30.0;
    Samples seg = (i % 3 == 1) ? voice(len_s, rate_hz, seed + i) : music(len_s, rate_hz, seed + i);
    set_rms(seg, 0.09);
    pool->segments.push_back(std::move(seg));
  }
  return pool;
}

Result<size_t> ProgrammeSource::read(float* out, size_t max_frames) {
  size_t done = 0;
  while (done < max_frames && pos_ < total_) {
    if (seg_start_ < 0 || pos_ < seg_start_ || pos_ >= seg_start_ + static_cast<int64_t>(seg_.size()))
      fill_segment_containing(pos_);
    const size_t off = static_cast<size_t>(pos_ - seg_start_);
    const size_t n = std::min({max_frames - done, seg_.size() - off, static_cast<size_t>(total_ - pos_)});
    std::copy_n(seg_.data() + off, n, out + done);
    done += n;
    pos_ += static_cast<int64_t>(n);
  }
  return done;
}

Status ProgrammeSource::seek(int64_t frame) {
  if (frame < 0 || frame > total_) return Error{ErrorCode::usage, "seek beyond the end", info_.path, std::nullopt};
  pos_ = frame;
  return ok_status();
}

}  // namespace godwit::synth
