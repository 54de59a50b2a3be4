// ProgrammeSource: an endless-looking synthetic aircheck, generated block
// by block (a 24 h recording never exists in memory), with clips planted at
// chosen offsets. For the benchmark and long-running tests.
//
// Thread contract: one per stream.
#pragma once

#include <memory>
#include <vector>

#include "godwit/audio/audio_source.h"
#include "godwit/core/types.h"

namespace godwit::synth {

struct PlantedClip {
  std::shared_ptr<const Samples> clip;  // at the source's rate
  int64_t offset_frames = 0;
  float gain = 1.0f;  // negative: polarity-inverted
};

enum class Content { programme, silence_with_faults };

// Programme segments generated once and reused, so that serving hours of
// audio costs a copy, not a synthesis (the benchmark times the engine, not
// the synthesizer). Segment i of a source is pool[hash(seed, i) % size].
struct SegmentPool {
  double rate_hz = 0;
  std::vector<Samples> segments;  // 30 s each
};
std::shared_ptr<const SegmentPool> make_segment_pool(double rate_hz, size_t count, uint64_t seed);

class ProgrammeSource final : public AudioSource {
 public:
  ProgrammeSource(std::string path, double rate_hz, double duration_s, uint64_t seed,
                  std::vector<PlantedClip> plants = {}, Content content = Content::programme,
                  std::shared_ptr<const SegmentPool> pool = nullptr);
  const AudioInfo& info() const override { return info_; }
  Result<size_t> read(float* out, size_t max_frames) override;
  Status seek(int64_t frame) override;
  int64_t position_frames() const override { return pos_; }

 private:
  void fill_segment_containing(int64_t frame);
  AudioInfo info_;
  uint64_t seed_;
  Content content_;
  std::vector<PlantedClip> plants_;
  std::shared_ptr<const SegmentPool> pool_;
  int64_t pos_ = 0;
  int64_t total_;
  // The current generated segment: frames [seg_start_, seg_start_ + seg_.size()).
  Samples seg_;
  int64_t seg_start_ = -1;
  static constexpr int64_t kSegmentSeconds = 30;
};

}  // namespace godwit::synth
