// AudioSource: where all audio enters the engine.
//
// A source yields mono frames at the file's native rate: the channel mean,
// or one chosen channel. Resampling to the analysis rate is the job of
// AnalysisStream (analysis_stream.h), so a source stays a plain decoder and
// tests can substitute MemorySource (memory_source.h).
//
// Thread contract: one source per stream; not safe for concurrent use.
#pragma once

#include <cstdint>
#include <functional>
#include <memory>
#include <optional>
#include <string>

#include "godwit/error.h"

namespace godwit {

struct AudioInfo {
  std::string path;            // as given by the caller
  std::string format;          // e.g. "wav", "flac", "mp3"; informative only
  double native_rate_hz = 0;   // > 0
  int channels = 0;            // channels in the file (before downmix)
  // Frames per channel when the container states it; empty when unknown
  // up front (some MP3 streams). Never relied on for correctness.
  std::optional<int64_t> native_frames;

  std::optional<double> duration_s() const {
    if (!native_frames || native_rate_hz <= 0) return std::nullopt;
    return static_cast<double>(*native_frames) / native_rate_hz;
  }
};

// Which channel becomes the mono signal. Default: the mean of all channels.
struct ChannelChoice {
  int channel = -1;  // -1: mean of all; 0-based index otherwise
};

class AudioSource {
 public:
  virtual ~AudioSource() = default;
  virtual const AudioInfo& info() const = 0;
  // Reads up to `max_frames` mono frames into `out`. Returns the count read;
  // 0 means the end of the stream. A decode failure returns `corrupt` with
  // the path and the position where it happened; frames returned by earlier
  // calls stay valid.
  virtual Result<size_t> read(float* out, size_t max_frames) = 0;
  // Moves the next read to native frame `frame`. Error if the source cannot
  // seek or the frame lies beyond its end.
  virtual Status seek(int64_t frame) = 0;
  // Native frame index of the next read.
  virtual int64_t position_frames() const = 0;
  // Like read(), but every channel, interleaved (out holds max_frames *
  // info().channels values): for loudness, which weighs channels itself.
  // Default: unsupported.
  virtual Result<size_t> read_interleaved(float* out, size_t max_frames) {
    (void)out;
    (void)max_frames;
    return Error{ErrorCode::unsupported, "this source cannot read all channels", info().path, std::nullopt};
  }
};

using SourcePtr = std::unique_ptr<AudioSource>;

// Opens a file through libsndfile (WAV, FLAC, OGG/Vorbis, Opus, MP3, and the
// rest of what the installed libsndfile decodes). Errors: not_found,
// unreadable, unsupported, corrupt, empty (a file with no frames), usage (a
// channel index the file does not have).
Result<SourcePtr> open_audio_file(const std::string& path, ChannelChoice choice = {});

// How the engine opens a path: files by default; tests substitute their own.
using SourceOpener = std::function<Result<SourcePtr>(const std::string& path, ChannelChoice choice)>;
SourceOpener file_opener();

}  // namespace godwit
