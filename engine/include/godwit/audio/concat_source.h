// ConcatSource: the files of one timeline run read as one stream.
//
// The stream runs at one rate (the first file's, or one given): a file
// logged at another rate is resampled to it (libsoxr), so a run may mix
// rates and codecs. Each file's first `skip_frames` (its own frames) are
// left out (overlap with its predecessor). Interleaved reads have the
// first file's channel count throughout (others are spread or folded). Stream frame f maps back to a
// file and a time within it through `locate_s()`. Channel choice and
// decoding are the opener's.
//
// Thread contract: one per stream.
#pragma once

#include <vector>

#include "godwit/audio/audio_source.h"

namespace godwit {

struct ConcatPart {
  std::string path;
  int64_t frames = 0;       // the file's length in its own frames (known: the timeline needs it)
  int64_t skip_frames = 0;  // leading frames left out, in its own frames
  double rate_hz = 0;       // the file's rate; 0: the stream's
};

class ConcatSource final : public AudioSource {
 public:
  // Opens the first file; later ones are opened as the stream reaches them.
  // A file that cannot be opened or breaks part way does not end the run:
  // the rest of it reads as silence and the first such failure is kept
  // (deferred_error(), offset in stream time), so the files after it are
  // still searched.
  // A file that turns out shorter than `frames` is padded with silence up
  // to it, so that the stream's frame numbers stay those of the timeline.
  // `stream_rate_hz` 0: the first file's rate.
  static Result<std::unique_ptr<ConcatSource>> open(std::string name, std::vector<ConcatPart> parts,
                                                    SourceOpener opener, ChannelChoice choice,
                                                    double stream_rate_hz = 0);

  const AudioInfo& info() const override { return info_; }
  Result<size_t> read(float* out, size_t max_frames) override;
  Status seek(int64_t frame) override;
  Result<size_t> read_interleaved(float* out, size_t max_frames) override;
  int64_t position_frames() const override { return pos_; }
  std::optional<Error> deferred_error() const override { return deferred_; }

  // Where stream frame `frame` lies: part index and seconds from that
  // file's own start (skipped frames included).
  std::pair<size_t, double> locate_s(double frame) const;
  // The native rate of the file holding stream frame `frame`.
  double part_rate_at(double frame) const;

 private:
  ConcatSource() = default;
  Status open_part(size_t i);
  Result<size_t> read_impl(float* out, size_t max_frames, bool interleaved);
  AudioInfo info_;
  std::vector<ConcatPart> parts_;
  SourceOpener opener_;
  ChannelChoice choice_;
  SourcePtr current_;
  size_t index_ = 0;
  int64_t pos_ = 0;
  int64_t total_ = 0;
  std::vector<int64_t> starts_;  // stream frame where part i begins
  void defer(Error e);
  std::vector<bool> broken_;           // per part: failed; the rest of it reads as silence
  std::optional<Error> deferred_;      // the first such failure, offset_s in stream time
  std::vector<float> mixed_;     // a part's frames before its channels are matched to the stream's
  size_t part_at(double frame) const;  // the part holding stream frame `frame`
  double part_rate(size_t i) const { return parts_[i].rate_hz > 0 ? parts_[i].rate_hz : info_.native_rate_hz; }
};

}  // namespace godwit
