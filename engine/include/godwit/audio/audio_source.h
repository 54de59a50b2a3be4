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

#include "godwit/core/error.h"

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
  // A failure the source read past instead of ending the stream (a run of
  // files, one of which broke: concat_source.h). Default: none.
  virtual std::optional<Error> deferred_error() const { return std::nullopt; }
  virtual Result<size_t> read_interleaved(float* out, size_t max_frames) {
    (void)out;
    (void)max_frames;
    return Error{ErrorCode::unsupported, "this source cannot read all channels", info().path, std::nullopt};
  }
  // Decoded samples (per channel, before any downmix) that were not finite
  // (NaN, Inf) or larger than kMaxSampleMagnitude in magnitude and were read
  // as 0 instead, since this source was opened: one such value would
  // otherwise poison every window around it (NaN scores, false matches).
  // Default: 0 (a source that never repairs).
  virtual int64_t repaired_samples() const { return 0; }
};

// Full scale is 1; float files may exceed it, but not by 60 dB.
inline constexpr float kMaxSampleMagnitude = 1000.0f;

using SourcePtr = std::unique_ptr<AudioSource>;

// Opens a file through libsndfile (WAV, FLAC, OGG/Vorbis, Opus, MP3, and the
// rest of what the installed libsndfile decodes). Only regular files are
// opened (a FIFO would block the caller until someone writes to it).
// Errors: not_found, unreadable (not a regular file, not audio), unsupported
// (also a sample rate outside kMinSampleRateHz..kMaxSampleRateHz or over
// kMaxChannels channels), corrupt, empty (a file with no frames), usage (a
// channel index the file does not have). Samples that are not finite or
// absurdly large read as 0 (AudioSource::repaired_samples). A WAV whose
// data chunk states more frames than the file holds reports the stated
// length and fails with `corrupt` where its audio ends.
inline constexpr double kMinSampleRateHz = 4000;
inline constexpr double kMaxSampleRateHz = 384000;
inline constexpr int kMaxChannels = 32;
Result<SourcePtr> open_audio_file(const std::string& path, ChannelChoice choice = {});

// How the engine opens a path: files by default; tests substitute their own.
using SourceOpener = std::function<Result<SourcePtr>(const std::string& path, ChannelChoice choice)>;
SourceOpener file_opener();

}  // namespace godwit
