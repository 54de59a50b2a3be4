// What a spot passes through between the master and the aircheck, for the
// benchmark and the tests: one random chain per airing, its parts in the
// order a real air chain applies them (resampling to the logger's rate,
// speed change or a tempo change with the pitch kept, truncation, EQ, fast
// compression, gain, polarity); the
// crossfade with the programme, noise and the limiter are applied where the
// airing is mixed into the recording (air_day.h).
//
// Filters are the biquads of R. Bristow-Johnson's "Audio EQ Cookbook"
// (published formulas); pink noise is P. Kellet's economy filter (published
// coefficients, from memory).
//
// Thread contract: plain functions and values.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "godwit/core/types.h"
#include "synth.h"

namespace godwit::synth {

// One second-order section, direct form I, run in double.
class Biquad {
 public:
  static Biquad highpass(double f_hz, double q, double rate_hz);
  static Biquad lowpass(double f_hz, double q, double rate_hz);
  static Biquad peak(double f_hz, double q, double gain_db, double rate_hz);
  static Biquad low_shelf(double f_hz, double gain_db, double rate_hz);
  static Biquad high_shelf(double f_hz, double gain_db, double rate_hz);
  void apply(Samples& x);

 private:
  static Biquad normalized(double b0, double b1, double b2, double a0, double a1, double a2);
  double b0_ = 1, b1_ = 0, b2_ = 0, a1_ = 0, a2_ = 0;
};

enum class NoiseColour { white, pink, brown };
const char* noise_colour_name(NoiseColour c);
// Gaussian noise of that colour, scaled to `rms`.
Samples coloured_noise(size_t n, double rms, NoiseColour colour, uint64_t seed);

// Feed-forward compressor: envelope of |x| with attack / release, gain
// reduction (1 - 1/ratio) above threshold_db (dBFS), then makeup gain.
void compress(Samples& x, double rate_hz, double threshold_db, double ratio, double attack_ms, double release_ms,
              double makeup_db);
// Soft limiter: transparent below `knee`, tanh-shaped towards `ceiling`.
void soft_limit(Samples& x, double knee, double ceiling);

struct EqStage {
  enum Kind { highpass, lowpass, peak, low_shelf, high_shelf } kind;
  double f_hz = 1000, q = 0.707, gain_db = 0;
};

// The random choices for one airing (drawn once, so that an airing that
// straddles two files of different rates is rendered alike in both).
struct AirChain {
  double speed = 1;              // played this much faster than the master
  // Or time-stretched, pitch kept (lasting master / tempo) by an outside
  // stretcher: sox's `tempo` (WSOLA) or rubberband's phase vocoder. Never
  // both a speed and a tempo change.
  enum class Stretcher { none, sox, rubberband };
  double tempo = 1;
  Stretcher stretcher = Stretcher::none;
  // How much faster than the master it runs, either way.
  double time_scale() const { return speed * tempo; }
  double coverage = 1;           // cut at the end to this fraction of the master (truncation)
  std::vector<EqStage> eq;
  bool telephone = false;        // 300-3400 Hz band among the EQ stages
  bool compressed = false;
  double comp_threshold_rel_db = 0, comp_ratio = 1, comp_attack_ms = 1, comp_release_ms = 50;
  double gain_db = 0;
  int polarity = 1;
  double fade_in_s = 0, fade_out_s = 0;  // crossfades with what surrounds it
  double snr_db = 99;            // additive noise, relative to the airing as aired
  NoiseColour noise = NoiseColour::white;
  uint64_t noise_seed = 0;
  // Short names of what this chain does, for recall by condition.
  std::vector<std::string> conditions() const;
};

struct ChainOdds {
  // tempo: of the airings at their master's speed (drawn from the noise
  // seed, so that a day's other choices stay those of its seed).
  double speed = 0.25, tempo = 0.15, truncate = 0.12, telephone = 0.15, compress = 0.7, polarity = 0.2, crossfade = 0.5;
  double snr_very_low = 0.06;  // SNR 0-1.5 dB
  double snr_low = 0.10;       // SNR 1.5-3 dB
};

AirChain draw_chain(Rng& rng, const ChainOdds& odds = {});

const char* stretcher_name(AirChain::Stretcher s);

// The master (mono, at master_rate_hz) through the chain's resampling,
// speed or tempo change (the tempo by running sox or rubberband on files in
// the system's temporary folder; empty when the tool fails), truncation, EQ, compression, gain and polarity, at
// out_rate_hz. The first output sample is the master's first sample.
Samples render_chain(const Samples& master, double master_rate_hz, const AirChain& chain, double out_rate_hz);

}  // namespace godwit::synth
