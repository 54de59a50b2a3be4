// Writes the seed corpus of audio_decode_fuzz: short clips of the project's
// own synthetic spots in every format the engine reads, at several rates
// and channel counts, plus WAV layouts libsndfile reads differently (8, 24
// and 32-bit float samples, WAVE_FORMAT_EXTENSIBLE, RF64) and a float WAV
// holding a NaN and a huge value. Each file stays under 20 KB.
//
//   make_audio_seeds OUT_DIR
#include <sndfile.h>

#include <cmath>
#include <cstdio>
#include <filesystem>
#include <limits>
#include <string>

#include "synth.h"

using namespace godwit;

namespace {

int write_libsndfile(const std::string& path, const Samples& x, int channels, int rate_hz, int format) {
  SF_INFO info{};
  info.channels = channels;
  info.samplerate = rate_hz;
  info.format = format;
  SNDFILE* sf = sf_open(path.c_str(), SFM_WRITE, &info);
  if (!sf) {
    std::fprintf(stderr, "%s: %s\n", path.c_str(), sf_strerror(nullptr));
    return 1;
  }
  sf_writef_float(sf, x.data(), static_cast<sf_count_t>(x.size() / static_cast<size_t>(channels)));
  sf_close(sf);
  return 0;
}

}  // namespace

int main(int argc, char** argv) {
  if (argc != 2) {
    std::fprintf(stderr, "usage: make_audio_seeds OUT_DIR\n");
    return 2;
  }
  const std::string out = argv[1];
  std::filesystem::create_directories(out);
  int bad = 0;
  auto synth_file = [&](const std::string& name, double seconds, double rate, int channels, double kbps = 32) {
    Samples x = synth::spot(seconds, rate, 100 + static_cast<uint64_t>(rate));
    if (channels == 2) x = synth::to_stereo(x);
    if (auto err = synth::write_audio(out + "/" + name, x, channels, rate, kbps); !err.empty()) {
      std::fprintf(stderr, "%s\n", err.c_str());
      ++bad;
    }
  };
  synth_file("mono-8k.wav", 0.25, 8000, 1);
  synth_file("stereo-22k.wav", 0.1, 22050, 2);
  synth_file("mono-16k.flac", 0.5, 16000, 1);
  synth_file("stereo-44k.flac", 0.1, 44100, 2);
  synth_file("mono-22k.ogg", 0.5, 22050, 1);
  synth_file("stereo-48k.ogg", 0.3, 48000, 2);
  synth_file("mono-48k.opus", 0.3, 48000, 1);
  synth_file("stereo-48k.opus", 0.2, 48000, 2);
  synth_file("mono-22k.mp3", 0.5, 22050, 1, 32);
  synth_file("stereo-44k.mp3", 0.3, 44100, 2, 64);

  Samples x = synth::spot(0.1, 16000, 7);
  bad += write_libsndfile(out + "/u8-16k.wav", x, 1, 16000, SF_FORMAT_WAV | SF_FORMAT_PCM_U8);
  bad += write_libsndfile(out + "/s24-16k.wav", x, 1, 16000, SF_FORMAT_WAV | SF_FORMAT_PCM_24);
  bad += write_libsndfile(out + "/ext-16k.wav", x, 1, 16000, SF_FORMAT_WAVEX | SF_FORMAT_PCM_16);
  bad += write_libsndfile(out + "/rf64-16k.wav", x, 1, 16000, SF_FORMAT_RF64 | SF_FORMAT_PCM_16);
  Samples odd(400, 0.25f);
  odd[100] = std::numeric_limits<float>::quiet_NaN();
  odd[200] = 3e38f;
  bad += write_libsndfile(out + "/float-nan-8k.wav", odd, 1, 8000, SF_FORMAT_WAV | SF_FORMAT_FLOAT);
  return bad ? 1 : 0;
}
