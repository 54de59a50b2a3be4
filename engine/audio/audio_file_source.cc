#include <sndfile.h>

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <mutex>
#include <vector>

#include "godwit/audio/audio_source.h"
#include "sndfile_lock.h"

namespace godwit {

std::mutex& detail::sndfile_open_mutex() {
  static std::mutex mu;
  return mu;
}

namespace {

std::mutex& open_mutex() { return detail::sndfile_open_mutex(); }

std::string format_name(int format) {
  switch (format & SF_FORMAT_TYPEMASK) {
    case SF_FORMAT_WAV: return "wav";
    case SF_FORMAT_WAVEX: return "wav";
    case SF_FORMAT_RF64: return "rf64";
    case SF_FORMAT_AIFF: return "aiff";
    case SF_FORMAT_FLAC: return "flac";
    case SF_FORMAT_OGG:
      return (format & SF_FORMAT_SUBMASK) == SF_FORMAT_OPUS ? "opus" : "ogg";
    case SF_FORMAT_MPEG: return "mp3";
    case SF_FORMAT_W64: return "w64";
    case SF_FORMAT_CAF: return "caf";
    default: return "other";
  }
}

// Formats whose frame count is exact, so a short read means truncation.
bool length_is_exact(int format) {
  const int type = format & SF_FORMAT_TYPEMASK;
  return type == SF_FORMAT_FLAC || type == SF_FORMAT_OGG;
}

// Replaces samples that are not finite or over kMaxSampleMagnitude in
// magnitude by 0; returns how many.
size_t repair_samples(float* x, size_t n) {
  size_t bad = 0;
  for (size_t i = 0; i < n; ++i) {
    if (!(std::fabs(x[i]) <= kMaxSampleMagnitude)) {  // also NaN
      x[i] = 0;
      ++bad;
    }
  }
  return bad;
}

uint32_t le32(const unsigned char* p) { return p[0] | (p[1] << 8) | (p[2] << 16) | (uint32_t(p[3]) << 24); }

// The frames a RIFF/WAVE file's data chunk states, when it states a size
// (0 and 0xFFFFFFFF are what streaming writers leave). libsndfile clips a
// data chunk that runs past the end of the file to what is there, so a WAV
// cut short would otherwise read as complete.
std::optional<int64_t> wav_stated_frames(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  std::vector<unsigned char> head(1 << 16);
  in.read(reinterpret_cast<char*>(head.data()), static_cast<std::streamsize>(head.size()));
  const size_t got = static_cast<size_t>(in.gcount());
  if (got < 12 || std::memcmp(head.data(), "RIFF", 4) != 0 || std::memcmp(head.data() + 8, "WAVE", 4) != 0)
    return std::nullopt;
  uint32_t block_align = 0;
  for (size_t pos = 12; pos + 8 <= got;) {
    const unsigned char* c = head.data() + pos;
    const uint32_t size = le32(c + 4);
    if (std::memcmp(c, "fmt ", 4) == 0 && pos + 8 + 14 <= got) block_align = c[8 + 12] | (c[8 + 13] << 8);
    if (std::memcmp(c, "data", 4) == 0) {
      if (block_align == 0 || size == 0 || size == 0xFFFFFFFFu) return std::nullopt;
      return static_cast<int64_t>(size / block_align);
    }
    pos += 8 + static_cast<size_t>(size) + (size & 1);
  }
  return std::nullopt;
}

class FileSource final : public AudioSource {
 public:
  FileSource(SNDFILE* sf, AudioInfo info, ChannelChoice choice, bool exact_length)
      : sf_(sf), info_(std::move(info)), choice_(choice), exact_length_(exact_length) {}
  ~FileSource() override { sf_close(sf_); }

  const AudioInfo& info() const override { return info_; }

  Result<size_t> read(float* out, size_t max_frames) override {
    if (failed_) return failure();
    const size_t ch = static_cast<size_t>(info_.channels);
    scratch_.resize(max_frames * ch);
    const sf_count_t got =
        sf_readf_float(sf_, scratch_.data(), static_cast<sf_count_t>(max_frames));
    if (got < 0 || sf_error(sf_) != SF_ERR_NO_ERROR) {
      failed_ = true;
      reason_ = sf_strerror(sf_);
      return failure();
    }
    const size_t n = static_cast<size_t>(got);
    repaired_ += static_cast<int64_t>(repair_samples(scratch_.data(), n * ch));
    if (n == 0 && exact_length_ && info_.native_frames && pos_ < *info_.native_frames) {
      failed_ = true;
      reason_ = "stream ended before its stated length of " +
                std::to_string(*info_.native_frames) + " frames (truncated file?)";
      return failure();
    }
    downmix(n, out);
    pos_ += static_cast<int64_t>(n);
    return n;
  }

  Result<size_t> read_interleaved(float* out, size_t max_frames) override {
    if (failed_) return failure();
    const sf_count_t got = sf_readf_float(sf_, out, static_cast<sf_count_t>(max_frames));
    if (got < 0 || sf_error(sf_) != SF_ERR_NO_ERROR) {
      failed_ = true;
      reason_ = sf_strerror(sf_);
      return failure();
    }
    repaired_ += static_cast<int64_t>(repair_samples(out, static_cast<size_t>(got) * static_cast<size_t>(info_.channels)));
    pos_ += got;
    return static_cast<size_t>(got);
  }

  Status seek(int64_t frame) override {
    if (frame < 0) return Error{ErrorCode::usage, "negative seek", info_.path, std::nullopt};
    if (sf_seek(sf_, static_cast<sf_count_t>(frame), SEEK_SET) < 0)
      return Error{ErrorCode::unsupported, "cannot seek in this file", info_.path,
                   static_cast<double>(frame) / info_.native_rate_hz};
    pos_ = frame;
    failed_ = false;
    return ok_status();
  }

  int64_t position_frames() const override { return pos_; }
  int64_t repaired_samples() const override { return repaired_; }

 private:
  Error failure() const {
    return Error{ErrorCode::corrupt, "decoding failed: " + reason_, info_.path,
                 static_cast<double>(pos_) / info_.native_rate_hz};
  }

  void downmix(size_t n, float* out) const {
    const size_t ch = static_cast<size_t>(info_.channels);
    if (choice_.channel >= 0) {
      const size_t c = static_cast<size_t>(choice_.channel);
      for (size_t i = 0; i < n; ++i) out[i] = scratch_[i * ch + c];
      return;
    }
    if (ch == 1) {
      std::copy_n(scratch_.data(), n, out);
      return;
    }
    const float inv = 1.0f / static_cast<float>(ch);
    for (size_t i = 0; i < n; ++i) {
      float s = 0;
      for (size_t c = 0; c < ch; ++c) s += scratch_[i * ch + c];
      out[i] = s * inv;
    }
  }

  SNDFILE* sf_;
  AudioInfo info_;
  ChannelChoice choice_;
  bool exact_length_;
  std::vector<float> scratch_;
  int64_t pos_ = 0;
  int64_t repaired_ = 0;
  bool failed_ = false;
  std::string reason_;
};

ErrorCode code_for_open_failure(int sf_code) {
  switch (sf_code) {
    case SF_ERR_UNRECOGNISED_FORMAT: return ErrorCode::unsupported;
    case SF_ERR_UNSUPPORTED_ENCODING: return ErrorCode::unsupported;
    case SF_ERR_MALFORMED_FILE: return ErrorCode::corrupt;
    case SF_ERR_SYSTEM: return ErrorCode::unreadable;
    default: return ErrorCode::unreadable;
  }
}

}  // namespace

Result<SourcePtr> open_audio_file(const std::string& path, ChannelChoice choice) {
  namespace fs = std::filesystem;
  std::error_code ec;
  const auto status = fs::status(path, ec);
  if (ec || !fs::exists(status))
    return Error{ErrorCode::not_found, "no such file", path, std::nullopt};
  if (fs::is_directory(status))
    return Error{ErrorCode::unreadable, "is a directory, not an audio file", path, std::nullopt};
  // Opening a FIFO would block until someone writes to it; a device could
  // be endless.
  if (!fs::is_regular_file(status))
    return Error{ErrorCode::unreadable, "not a regular file (a pipe, socket or device?), not an audio file", path,
                 std::nullopt};
  if (fs::file_size(path, ec) == 0 && !ec)
    return Error{ErrorCode::empty, "file is empty (0 bytes)", path, std::nullopt};

  SF_INFO sfi{};
  SNDFILE* sf = nullptr;
  {
    std::lock_guard lock(open_mutex());
    sf = sf_open(path.c_str(), SFM_READ, &sfi);
    if (sf == nullptr) {
      const int code = sf_error(nullptr);
      std::string why = sf_strerror(nullptr);
      // libsndfile says this of data it takes for MPEG and cannot read; the
      // file was just found to be a regular file.
      if (why.find("not a regular file") != std::string::npos) why = "unrecognised or damaged data";
      return Error{code_for_open_failure(code), "not a readable audio file: " + why, path, std::nullopt};
    }
  }
  if (sfi.channels <= 0 || sfi.samplerate <= 0) {
    sf_close(sf);
    return Error{ErrorCode::corrupt, "header states no channels or no sample rate", path,
                 std::nullopt};
  }
  if (sfi.samplerate < kMinSampleRateHz || sfi.samplerate > kMaxSampleRateHz || sfi.channels > kMaxChannels) {
    sf_close(sf);
    return Error{ErrorCode::unsupported,
                 "header states " + std::to_string(sfi.samplerate) + " Hz and " + std::to_string(sfi.channels) +
                     " channel(s); recordings and masters need " + std::to_string(int(kMinSampleRateHz)) + " to " +
                     std::to_string(int(kMaxSampleRateHz)) + " Hz and at most " + std::to_string(kMaxChannels) +
                     " channels",
                 path, std::nullopt};
  }
  if (choice.channel >= sfi.channels) {
    sf_close(sf);
    return Error{ErrorCode::usage,
                 "channel " + std::to_string(choice.channel) + " requested but the file has " +
                     std::to_string(sfi.channels) + " (channels count from 0)",
                 path, std::nullopt};
  }
  AudioInfo info;
  info.path = path;
  info.format = format_name(sfi.format);
  info.native_rate_hz = sfi.samplerate;
  info.channels = sfi.channels;
  // libsndfile reports SF_COUNT_MAX or 0 for streams of unknown length.
  if (sfi.frames > 0 && sfi.frames < SF_COUNT_MAX) info.native_frames = sfi.frames;
  if (sfi.frames == 0 && (sfi.format & SF_FORMAT_TYPEMASK) != SF_FORMAT_MPEG) {
    sf_close(sf);
    return Error{ErrorCode::empty, "file holds no audio frames", path, std::nullopt};
  }
  bool exact = length_is_exact(sfi.format) && info.native_frames.has_value();
  const int type = sfi.format & SF_FORMAT_TYPEMASK;
  if (type == SF_FORMAT_WAV || type == SF_FORMAT_WAVEX) {
    if (const auto stated = wav_stated_frames(path); stated && info.native_frames && *stated > *info.native_frames) {
      info.native_frames = *stated;  // what the header promises; the read fails where the audio ends
      exact = true;
    }
  }
  return SourcePtr(std::make_unique<FileSource>(sf, std::move(info), choice, exact));
}

SourceOpener file_opener() {
  return [](const std::string& path, ChannelChoice choice) { return open_audio_file(path, choice); };
}

}  // namespace godwit
