// ConcatSource: the files of one timeline run read as one stream.
//
// Files must share a native rate; each file's first `skip_frames` are left
// out (overlap with its predecessor). Stream frame f maps back to a file
// and a frame within it through `locate()`. Channel choice and decoding are
// the opener's.
//
// Thread contract: one per stream.
#pragma once

#include <vector>

#include "godwit/audio_source.h"

namespace godwit {

struct ConcatPart {
  std::string path;
  int64_t frames = 0;       // the file's length in native frames (known: the timeline needs it)
  int64_t skip_frames = 0;  // leading frames left out
};

class ConcatSource final : public AudioSource {
 public:
  // Opens the first file; later ones are opened as the stream reaches them.
  // A file that turns out shorter than `frames` is padded with silence up
  // to it, so that the stream's frame numbers stay those of the timeline.
  static Result<std::unique_ptr<ConcatSource>> open(std::string name, std::vector<ConcatPart> parts,
                                                    SourceOpener opener, ChannelChoice choice);

  const AudioInfo& info() const override { return info_; }
  Result<size_t> read(float* out, size_t max_frames) override;
  Status seek(int64_t frame) override;
  Result<size_t> read_interleaved(float* out, size_t max_frames) override;
  int64_t position_frames() const override { return pos_; }

  // Where stream frame `frame` lies: part index and frame within that file
  // (counting from the file's own start, skipped frames included).
  std::pair<size_t, double> locate(double frame) const;

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
};

}  // namespace godwit
