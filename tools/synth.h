// godwit's own audio synthesis, for tests, the benchmark and the demo.
//
// Everything is generated from a seed, deterministically, so tests and the
// demo need no recorded audio. "Music" is a chord progression of harmonic
// tones with a soft pulse; "voice" is a formant-filtered glottal pulse train
// with a syllable rhythm (speech-like in spectrum and envelope, not words).
//
// Thread contract: plain functions.
#pragma once

#include <cstdint>
#include <string>

#include "godwit/core/types.h"

namespace godwit::synth {

// Deterministic generator (splitmix64): same seed, same numbers, on any
// platform and standard library.
class Rng {
 public:
  explicit Rng(uint64_t seed) : s_(seed) {}
  uint64_t next();
  double uniform();                     // [0, 1)
  double uniform(double a, double b);   // [a, b)
  double gaussian();                    // N(0, 1)

 private:
  uint64_t s_;
};

Samples music(double duration_s, double rate_hz, uint64_t seed);
Samples voice(double duration_s, double rate_hz, uint64_t seed);
// A spot: a music bed under a voice, with 20 ms fades.
Samples spot(double duration_s, double rate_hz, uint64_t seed);
// Programme: alternating music and talk segments of 8-40 s.
Samples programme(double duration_s, double rate_hz, uint64_t seed);
Samples white_noise(size_t n, double rms, uint64_t seed);

double rms(const Samples& x);
// Adds `clip * gain` into `into` starting at `offset` (clipped to the end).
void mix_into(Samples& into, const Samples& clip, size_t offset, double gain);
// Scales x so that its RMS is `target_rms`.
void set_rms(Samples& x, double target_rms);

// Writes mono or interleaved audio; the format follows the extension:
// .wav (16-bit PCM), .flac (16-bit), .ogg (Vorbis), .opus, .mp3. Returns an
// error message, empty on success.
std::string write_audio(const std::string& path, const Samples& interleaved, int channels,
                        double rate_hz, double mp3_bitrate_kbps = 128);

// Tempo change with the pitch kept, by sox's `tempo` effect (WSOLA), through
// files in `scratch_dir`; empty when sox is missing or fails. For
// benchmark airings only (an outside tool, not our code, makes them).
Samples sox_tempo(const Samples& mono, double rate_hz, double factor, const std::string& scratch_dir);
// The same by rubberband's phase vocoder (Debian package rubberband-cli,
// `rubberband -T factor`: tempo multiple, pitch kept).
Samples rubberband_tempo(const Samples& mono, double rate_hz, double factor, const std::string& scratch_dir);

// Mono to stereo with a little width (right = left delayed 0 samples,
// slightly different gain), interleaved.
Samples to_stereo(const Samples& mono, double right_gain = 0.9);

}  // namespace godwit::synth
