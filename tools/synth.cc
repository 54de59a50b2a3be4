#include "synth.h"

#include "godwit/audio/analysis_stream.h"

#include <sndfile.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <numbers>

namespace godwit::synth {

uint64_t Rng::next() {
  uint64_t z = (s_ += 0x9e3779b97f4a7c15ULL);
  z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ULL;
  z = (z ^ (z >> 27)) * 0x94d049bb133111ebULL;
  return z ^ (z >> 31);
}
double Rng::uniform() { return static_cast<double>(next() >> 11) * 0x1.0p-53; }
double Rng::uniform(double a, double b) { return a + (b - a) * uniform(); }
double Rng::gaussian() {
  const double u1 = std::max(uniform(), 1e-300), u2 = uniform();
  return std::sqrt(-2.0 * std::log(u1)) * std::cos(2 * std::numbers::pi * u2);
}

namespace {

constexpr double kPi = std::numbers::pi;

// Two-pole resonator (formant).
struct Resonator {
  double a1 = 0, a2 = 0, g = 1, y1 = 0, y2 = 0;
  void set(double f_hz, double bw_hz, double rate_hz) {
    const double r = std::exp(-kPi * bw_hz / rate_hz);
    a1 = 2 * r * std::cos(2 * kPi * f_hz / rate_hz);
    a2 = -r * r;
    g = 1 - r;
  }
  double step(double x) {
    const double y = g * x + a1 * y1 + a2 * y2;
    y2 = y1;
    y1 = y;
    return y;
  }
};

void fade(Samples& x, double rate_hz, double fade_s) {
  const size_t n = std::min(x.size() / 2, static_cast<size_t>(fade_s * rate_hz));
  for (size_t i = 0; i < n; ++i) {
    const float g = static_cast<float>(i) / static_cast<float>(n);
    x[i] *= g;
    x[x.size() - 1 - i] *= g;
  }
}

}  // namespace

Samples music(double duration_s, double rate_hz, uint64_t seed) {
  Rng rng(seed);
  const size_t n = static_cast<size_t>(duration_s * rate_hz);
  Samples out(n, 0.0f);
  const double beat_s = rng.uniform(0.35, 0.7);
  const double root_hz = rng.uniform(110, 220);
  static const int kChords[][3] = {{0, 4, 7}, {5, 9, 12}, {7, 11, 14}, {-3, 0, 4}, {2, 5, 9}};
  const size_t beat = static_cast<size_t>(beat_s * rate_hz);
  for (size_t start = 0; start < n; start += 4 * beat) {
    const auto& chord = kChords[rng.next() % 5];
    for (int v = 0; v < 3; ++v) {
      const double f = root_hz * std::pow(2.0, chord[v] / 12.0);
      const double phase = rng.uniform(0, 2 * kPi);
      for (size_t i = start; i < std::min(n, start + 4 * beat); ++i) {
        const double t = static_cast<double>(i - start) / rate_hz;
        const double env = std::exp(-t * 0.8) * 0.8 + 0.2;
        double s = 0;
        for (int h = 1; h <= 5; ++h)
          if (f * h < rate_hz * 0.45) s += std::sin(2 * kPi * f * h * t + phase * h) / (h * h);
        out[i] += static_cast<float>(0.12 * env * s);
      }
    }
    // Melody notes, one per beat, on a pentatonic scale.
    static const int kScale[] = {0, 2, 4, 7, 9, 12, 14, 16};
    for (int b = 0; b < 4; ++b) {
      const double f = 2 * root_hz * std::pow(2.0, kScale[rng.next() % 8] / 12.0);
      const size_t a = start + static_cast<size_t>(b) * beat;
      for (size_t i = a; i < std::min(n, a + beat); ++i) {
        const double t = static_cast<double>(i - a) / rate_hz;
        out[i] += static_cast<float>(0.1 * std::exp(-t * 4) * (std::sin(2 * kPi * f * t) + 0.3 * std::sin(4 * kPi * f * t)));
      }
      // Soft percussion: a noise burst on each beat.
      const size_t hit = std::min(n, a + static_cast<size_t>(0.03 * rate_hz));
      for (size_t i = a; i < hit; ++i) {
        const double t = static_cast<double>(i - a) / rate_hz;
        out[i] += static_cast<float>(0.08 * std::exp(-t * 120) * rng.gaussian());
      }
    }
  }
  return out;
}

Samples voice(double duration_s, double rate_hz, uint64_t seed) {
  Rng rng(seed);
  const size_t n = static_cast<size_t>(duration_s * rate_hz);
  Samples out(n, 0.0f);
  Resonator f1, f2, f3;
  const double base_pitch = rng.uniform(95, 210);
  double phase = 0;
  size_t i = 0;
  while (i < n) {
    // A syllable 120-300 ms, sometimes followed by a pause.
    const size_t syl = static_cast<size_t>(rng.uniform(0.12, 0.3) * rate_hz);
    const double F1 = rng.uniform(300, 850), F2 = rng.uniform(900, 2300), F3 = rng.uniform(2400, 3200);
    f1.set(F1, 80, rate_hz);
    f2.set(F2, 110, rate_hz);
    f3.set(std::min(F3, rate_hz * 0.45), 160, rate_hz);
    const double pitch0 = base_pitch * rng.uniform(0.85, 1.2), pitch1 = base_pitch * rng.uniform(0.85, 1.2);
    const bool fricative = rng.uniform() < 0.2;
    for (size_t k = 0; k < syl && i < n; ++k, ++i) {
      const double u = static_cast<double>(k) / static_cast<double>(syl);
      const double env = std::sin(kPi * u);
      const double pitch = pitch0 + (pitch1 - pitch0) * u;
      phase += pitch / rate_hz;
      double src;
      if (fricative) {
        src = 0.3 * rng.gaussian();
      } else {
        src = phase >= 1.0 ? 1.0 : 0.0;  // glottal pulse
        if (phase >= 1.0) phase -= 1.0;
        src += 0.02 * rng.gaussian();
      }
      const double y = 4.0 * f1.step(src) + 3.0 * f2.step(src) + 1.5 * f3.step(src);
      out[i] = static_cast<float>(env * y);
    }
    if (rng.uniform() < 0.15) i += static_cast<size_t>(rng.uniform(0.05, 0.25) * rate_hz);
  }
  set_rms(out, 0.1);
  return out;
}

Samples spot(double duration_s, double rate_hz, uint64_t seed) {
  Samples bed = music(duration_s, rate_hz, seed * 2 + 1);
  Samples v = voice(duration_s, rate_hz, seed * 2 + 2);
  set_rms(bed, 0.07);
  for (size_t i = 0; i < bed.size(); ++i) bed[i] += v[i];
  fade(bed, rate_hz, 0.02);
  return bed;
}

Samples programme(double duration_s, double rate_hz, uint64_t seed) {
  Rng rng(seed);
  const size_t n = static_cast<size_t>(duration_s * rate_hz);
  Samples out;
  out.reserve(n);
  uint64_t part = 0;
  while (out.size() < n) {
    const double seg_s = rng.uniform(8, 40);
    const bool talk = rng.uniform() < 0.4;
    Samples seg = talk ? voice(seg_s, rate_hz, seed * 1000 + part) : music(seg_s, rate_hz, seed * 1000 + part);
    set_rms(seg, talk ? 0.1 : 0.09);
    fade(seg, rate_hz, 0.05);
    out.insert(out.end(), seg.begin(), seg.end());
    ++part;
  }
  out.resize(n);
  return out;
}

Samples white_noise(size_t n, double level_rms, uint64_t seed) {
  Rng rng(seed);
  Samples out(n);
  for (auto& v : out) v = static_cast<float>(level_rms * rng.gaussian());
  return out;
}

double rms(const Samples& x) {
  double e = 0;
  for (float v : x) e += static_cast<double>(v) * v;
  return x.empty() ? 0.0 : std::sqrt(e / static_cast<double>(x.size()));
}

void mix_into(Samples& into, const Samples& clip, size_t offset, double gain) {
  for (size_t i = 0; i < clip.size() && offset + i < into.size(); ++i)
    into[offset + i] += static_cast<float>(gain * clip[i]);
}

void set_rms(Samples& x, double target_rms) {
  const double r = rms(x);
  if (r <= 0) return;
  const float g = static_cast<float>(target_rms / r);
  for (auto& v : x) v *= g;
}

Samples to_stereo(const Samples& mono, double right_gain) {
  Samples out(mono.size() * 2);
  for (size_t i = 0; i < mono.size(); ++i) {
    out[2 * i] = mono[i];
    out[2 * i + 1] = static_cast<float>(mono[i] * right_gain);
  }
  return out;
}

std::string write_audio(const std::string& path, const Samples& interleaved, int channels, double rate_hz,
                        double mp3_bitrate_kbps) {
  const auto dot = path.rfind('.');
  const std::string ext = dot == std::string::npos ? "" : path.substr(dot + 1);
  if (ext == "mp3" && std::system("command -v lame >/dev/null 2>&1") == 0) {
    // Through the lame encoder, which writes the LAME/Xing info tag that lets
    // decoders remove the encoder delay (libsndfile's own MP3 writer omits
    // it, leaving the decoded stream about 1105 samples late).
    const std::string wav = path + ".tmp.wav";
    if (auto err = write_audio(wav, interleaved, channels, rate_hz); !err.empty()) return err;
    char kbps[16];
    std::snprintf(kbps, sizeof kbps, "%d", static_cast<int>(mp3_bitrate_kbps));
    const std::string cmd = std::string("lame --quiet -b ") + kbps + " '" + wav + "' '" + path + "'";
    const int rc = std::system(cmd.c_str());
    std::remove(wav.c_str());
    return rc == 0 ? std::string() : "lame failed to encode " + path;
  }
  SF_INFO info{};
  info.channels = channels;
  info.samplerate = static_cast<int>(rate_hz);
  if (ext == "wav") info.format = SF_FORMAT_WAV | SF_FORMAT_PCM_16;
  else if (ext == "flac") info.format = SF_FORMAT_FLAC | SF_FORMAT_PCM_16;
  else if (ext == "ogg") info.format = SF_FORMAT_OGG | SF_FORMAT_VORBIS;
  else if (ext == "opus") info.format = SF_FORMAT_OGG | SF_FORMAT_OPUS;
  else if (ext == "mp3") info.format = SF_FORMAT_MPEG | SF_FORMAT_MPEG_LAYER_III;
  else return "unknown extension '" + ext + "' (wav, flac, ogg, opus, mp3)";
  SNDFILE* sf = sf_open(path.c_str(), SFM_WRITE, &info);
  if (!sf) return std::string("cannot write ") + path + ": " + sf_strerror(nullptr);
  if (ext == "mp3") {
    int mode = SF_BITRATE_MODE_CONSTANT;
    sf_command(sf, SFC_SET_BITRATE_MODE, &mode, sizeof mode);
    // Compression level 0..1 maps onto the encoder's bitrate range; 320 kbps top.
    double level = std::clamp(1.0 - (mp3_bitrate_kbps - 32.0) / (320.0 - 32.0), 0.0, 1.0);
    sf_command(sf, SFC_SET_COMPRESSION_LEVEL, &level, sizeof level);
  }
  int clip = SF_TRUE;
  sf_command(sf, SFC_SET_CLIPPING, &clip, sizeof clip);
  const sf_count_t frames = static_cast<sf_count_t>(interleaved.size() / static_cast<size_t>(channels));
  const sf_count_t wrote = sf_writef_float(sf, interleaved.data(), frames);
  std::string err;
  if (wrote != frames) err = std::string("short write to ") + path + ": " + sf_strerror(sf);
  sf_close(sf);
  return err;
}

Samples sox_tempo(const Samples& mono, double rate_hz, double factor, const std::string& scratch_dir) {
  const std::string in = scratch_dir + "/tempo-in.wav", out = scratch_dir + "/tempo-out.wav";
  if (!write_audio(in, mono, 1, rate_hz).empty()) return {};
  char cmd[2048];
  std::snprintf(cmd, sizeof cmd, "sox -q '%s' -b 32 -e floating-point '%s' tempo %.6f 2>/dev/null", in.c_str(),
                out.c_str(), factor);
  if (std::system(cmd) != 0) return {};
  auto src = open_audio_file(out, ChannelChoice{});
  if (!src) return {};
  auto d = decode_all(*src.value(), rate_hz);
  return d ? d.value() : Samples{};
}

Samples rubberband_tempo(const Samples& mono, double rate_hz, double factor, const std::string& scratch_dir) {
  const std::string in = scratch_dir + "/tempo-in.wav", out = scratch_dir + "/tempo-out.wav";
  if (!write_audio(in, mono, 1, rate_hz).empty()) return {};
  char cmd[2048];
  std::snprintf(cmd, sizeof cmd, "rubberband -q -T %.6f '%s' '%s' >/dev/null 2>&1", factor, in.c_str(), out.c_str());
  if (std::system(cmd) != 0) return {};
  auto src = open_audio_file(out, ChannelChoice{});
  if (!src) return {};
  auto d = decode_all(*src.value(), rate_hz);
  return d ? d.value() : Samples{};
}

}  // namespace godwit::synth
