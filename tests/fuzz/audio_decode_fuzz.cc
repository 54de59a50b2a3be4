// Fuzz target: opening and decoding audio files (audio_source.h), as every
// recording and master enters the engine: the bytes are written to a file
// (its extension from the bytes' magic: .wav, .flac, .ogg, .opus, else
// .mp3, where libsndfile also guesses from the name), opened with
// open_audio_file, read to the end at the analysis rate through
// AnalysisStream (resampling from whatever rate the header states), then
// read again from the start with every channel.
//
// Checked beyond crashes, leaks, hangs and sanitizer findings, against
// audio_source.h's contract:
//   - an opened file states 4 000-384 000 Hz and 1-32 channels;
//   - a failure is one of the documented codes (never `internal`), and a
//     read failure is `corrupt` with the file's path;
//   - every sample read is finite and within kMaxSampleMagnitude (values
//     that are not are repaired to 0), and so is every resampled one;
//   - the frames read match position_frames(), and a file whose length is
//     exact (FLAC, Ogg, a WAV's data chunk) never yields more than it stated.
//
// libsndfile and the codecs are Debian's builds, not instrumented: ASan
// sees their heap use (leaks, overflows into our buffers), not their
// reads of their own memory.
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <fstream>
#include <string>

#include "fuzz_fixture.h"
#include "godwit/audio/analysis_stream.h"
#include "godwit/audio/audio_source.h"

using namespace godwit;

namespace {

[[noreturn]] void fail(const std::string& what) {
  std::fprintf(stderr, "audio_decode_fuzz: %s\n", what.c_str());
  std::abort();
}

std::string extension_for(const uint8_t* d, size_t n) {
  auto starts = [&](const char* magic) { return n >= std::strlen(magic) && std::memcmp(d, magic, std::strlen(magic)) == 0; };
  if (starts("RIFF") || starts("RF64")) return ".wav";
  if (starts("fLaC")) return ".flac";
  if (starts("OggS")) {
    const std::string head(reinterpret_cast<const char*>(d), std::min<size_t>(n, 128));
    return head.find("OpusHead") != std::string::npos ? ".opus" : ".ogg";
  }
  return ".mp3";
}

void check_open_error(const Error& e) {
  switch (e.code) {
    case ErrorCode::not_found:
    case ErrorCode::unreadable:
    case ErrorCode::unsupported:
    case ErrorCode::corrupt:
    case ErrorCode::empty:
      return;
    default:
      fail("open failed with an undocumented code: " + std::string(wire_name(e.code)) + " " + e.describe());
  }
}

void check_read_error(const Error& e, const std::string& path) {
  if (e.code != ErrorCode::corrupt || e.path != path)
    fail("a read failed with " + std::string(wire_name(e.code)) + " for " + e.path + ": " + e.message);
}

void check_samples(const float* x, size_t n, float limit, const char* where) {
  for (size_t i = 0; i < n; ++i)
    if (!(std::fabs(x[i]) <= limit)) fail(std::string("a sample out of range after ") + where + ": " + std::to_string(x[i]));
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  static const std::filesystem::path dir = fuzz::private_scratch_dir("audio");
  const std::string path = (dir / ("rec" + extension_for(data, size))).string();
  {
    std::ofstream out(path, std::ios::binary | std::ios::trunc);
    out.write(reinterpret_cast<const char*>(data), static_cast<std::streamsize>(size));
  }
  auto opened = open_audio_file(path);
  if (!opened) {
    check_open_error(opened.error());
    std::remove(path.c_str());
    return 0;
  }
  AudioSource& src = *opened.value();
  const AudioInfo info = src.info();
  if (!(info.native_rate_hz >= kMinSampleRateHz && info.native_rate_hz <= kMaxSampleRateHz) || info.channels < 1 ||
      info.channels > kMaxChannels)
    fail("opened a file outside the limits: " + std::to_string(info.native_rate_hz) + " Hz, " +
         std::to_string(info.channels) + " channels");

  // Mono at the analysis rate, as the search reads it. Resampling a signal
  // bounded by kMaxSampleMagnitude overshoots it by a few percent at most.
  AnalysisStream stream(src, 8000, 4096);
  Samples out;
  for (;;) {
    auto more = stream.next(out);
    check_samples(out.data(), out.size(), 1.5f * kMaxSampleMagnitude, "resampling");
    if (!more) {
      check_read_error(more.error(), path);
      break;
    }
    if (!more.value()) break;
  }
  if (stream.native_frames_read() != src.position_frames()) fail("frames read differ from position_frames()");
  if (info.native_frames && src.position_frames() > *info.native_frames &&
      (info.format == "flac" || info.format == "ogg" || info.format == "opus"))
    fail("more frames than the stream stated");

  // Every channel, from the start, as loudness reads it.
  if (src.seek(0)) {
    std::vector<float> block(1024 * static_cast<size_t>(info.channels));
    for (;;) {
      auto got = src.read_interleaved(block.data(), 1024);
      if (!got) {
        check_read_error(got.error(), path);
        break;
      }
      if (got.value() == 0) break;
      check_samples(block.data(), got.value() * static_cast<size_t>(info.channels), kMaxSampleMagnitude, "decoding");
    }
  }
  opened.value().reset();
  std::remove(path.c_str());
  return 0;
}
