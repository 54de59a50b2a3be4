#include "air_chain.h"

#include <algorithm>
#include <cmath>

#include <unistd.h>

#include <atomic>
#include <filesystem>

#include "godwit/audio/resampler.h"

namespace godwit::synth {
namespace {

constexpr double kPi = 3.14159265358979323846;

struct Coeffs {
  double b0, b1, b2, a0, a1, a2;
};

// The tempo change by the outside tool, in a folder of its own.
Samples stretch(const Samples& x, double rate_hz, double tempo, AirChain::Stretcher how) {
  static std::atomic<unsigned> counter{0};
  const auto dir = std::filesystem::temp_directory_path() /
                   ("godwit-stretch-" + std::to_string(::getpid()) + "-" + std::to_string(counter++));
  std::filesystem::create_directories(dir);
  Samples y = how == AirChain::Stretcher::rubberband ? rubberband_tempo(x, rate_hz, tempo, dir.string())
                                                      : sox_tempo(x, rate_hz, tempo, dir.string());
  std::error_code ec;
  std::filesystem::remove_all(dir, ec);
  return y;
}

}  // namespace

// RBJ Audio EQ Cookbook: w0 = 2 pi f / Fs, alpha = sin(w0) / (2 Q),
// A = 10^(dBgain / 40); shelves with slope S = 1.
Biquad Biquad::normalized(double b0, double b1, double b2, double a0, double a1, double a2) {
  Biquad q;
  q.b0_ = b0 / a0;
  q.b1_ = b1 / a0;
  q.b2_ = b2 / a0;
  q.a1_ = a1 / a0;
  q.a2_ = a2 / a0;
  return q;
}

Biquad Biquad::highpass(double f_hz, double qf, double rate_hz) {
  const double w0 = 2 * kPi * f_hz / rate_hz, cw = std::cos(w0), alpha = std::sin(w0) / (2 * qf);
  const Coeffs c{(1 + cw) / 2, -(1 + cw), (1 + cw) / 2, 1 + alpha, -2 * cw, 1 - alpha};
  return normalized(c.b0, c.b1, c.b2, c.a0, c.a1, c.a2);
}

Biquad Biquad::lowpass(double f_hz, double qf, double rate_hz) {
  const double w0 = 2 * kPi * f_hz / rate_hz, cw = std::cos(w0), alpha = std::sin(w0) / (2 * qf);
  const Coeffs c{(1 - cw) / 2, 1 - cw, (1 - cw) / 2, 1 + alpha, -2 * cw, 1 - alpha};
  return normalized(c.b0, c.b1, c.b2, c.a0, c.a1, c.a2);
}

Biquad Biquad::peak(double f_hz, double qf, double gain_db, double rate_hz) {
  const double A = std::pow(10.0, gain_db / 40), w0 = 2 * kPi * f_hz / rate_hz, cw = std::cos(w0),
               alpha = std::sin(w0) / (2 * qf);
  const Coeffs c{1 + alpha * A, -2 * cw, 1 - alpha * A, 1 + alpha / A, -2 * cw, 1 - alpha / A};
  return normalized(c.b0, c.b1, c.b2, c.a0, c.a1, c.a2);
}

Biquad Biquad::low_shelf(double f_hz, double gain_db, double rate_hz) {
  const double A = std::pow(10.0, gain_db / 40), w0 = 2 * kPi * f_hz / rate_hz, cw = std::cos(w0),
               alpha = std::sin(w0) / 2 * std::sqrt(2.0), sA = 2 * std::sqrt(A) * alpha;
  const Coeffs c{A * ((A + 1) - (A - 1) * cw + sA), 2 * A * ((A - 1) - (A + 1) * cw), A * ((A + 1) - (A - 1) * cw - sA),
                 (A + 1) + (A - 1) * cw + sA, -2 * ((A - 1) + (A + 1) * cw), (A + 1) + (A - 1) * cw - sA};
  return normalized(c.b0, c.b1, c.b2, c.a0, c.a1, c.a2);
}

Biquad Biquad::high_shelf(double f_hz, double gain_db, double rate_hz) {
  const double A = std::pow(10.0, gain_db / 40), w0 = 2 * kPi * f_hz / rate_hz, cw = std::cos(w0),
               alpha = std::sin(w0) / 2 * std::sqrt(2.0), sA = 2 * std::sqrt(A) * alpha;
  const Coeffs c{A * ((A + 1) + (A - 1) * cw + sA), -2 * A * ((A - 1) + (A + 1) * cw), A * ((A + 1) + (A - 1) * cw - sA),
                 (A + 1) - (A - 1) * cw + sA, 2 * ((A - 1) - (A + 1) * cw), (A + 1) - (A - 1) * cw - sA};
  return normalized(c.b0, c.b1, c.b2, c.a0, c.a1, c.a2);
}

void Biquad::apply(Samples& x) {
  double x1 = 0, x2 = 0, y1 = 0, y2 = 0;
  for (auto& v : x) {
    const double in = v;
    const double y = b0_ * in + b1_ * x1 + b2_ * x2 - a1_ * y1 - a2_ * y2;
    x2 = x1;
    x1 = in;
    y2 = y1;
    y1 = y;
    v = static_cast<float>(y);
  }
}

const char* stretcher_name(AirChain::Stretcher s) {
  switch (s) {
    case AirChain::Stretcher::none: return "none";
    case AirChain::Stretcher::sox: return "sox";
    case AirChain::Stretcher::rubberband: return "rubberband";
  }
  return "?";
}

const char* noise_colour_name(NoiseColour c) {
  switch (c) {
    case NoiseColour::white: return "white";
    case NoiseColour::pink: return "pink";
    case NoiseColour::brown: return "brown";
  }
  return "?";
}

Samples coloured_noise(size_t n, double level_rms, NoiseColour colour, uint64_t seed) {
  Rng rng(seed);
  Samples out(n);
  double b0 = 0, b1 = 0, b2 = 0, b3 = 0, b4 = 0, b5 = 0, b6 = 0, brown = 0;
  for (auto& v : out) {
    const double w = rng.gaussian();
    double y = w;
    if (colour == NoiseColour::pink) {  // Kellet's refined pink filter
      b0 = 0.99886 * b0 + w * 0.0555179;
      b1 = 0.99332 * b1 + w * 0.0750759;
      b2 = 0.96900 * b2 + w * 0.1538520;
      b3 = 0.86650 * b3 + w * 0.3104856;
      b4 = 0.55000 * b4 + w * 0.5329522;
      b5 = -0.7616 * b5 - w * 0.0168980;
      y = b0 + b1 + b2 + b3 + b4 + b5 + b6 + w * 0.5362;
      b6 = w * 0.115926;
    } else if (colour == NoiseColour::brown) {  // leaky integrator
      brown = 0.995 * brown + w;
      y = brown;
    }
    v = static_cast<float>(y);
  }
  set_rms(out, level_rms);
  return out;
}

void compress(Samples& x, double rate_hz, double threshold_db, double ratio, double attack_ms, double release_ms,
              double makeup_db) {
  const double att = std::exp(-1.0 / (attack_ms * 1e-3 * rate_hz)), rel = std::exp(-1.0 / (release_ms * 1e-3 * rate_hz));
  const double makeup = std::pow(10.0, makeup_db / 20);
  double env = 0;
  for (auto& v : x) {
    const double a = std::fabs(v);
    env = a > env ? att * env + (1 - att) * a : rel * env + (1 - rel) * a;
    const double env_db = 20 * std::log10(env + 1e-12);
    const double over = env_db - threshold_db;
    const double gain_db = over > 0 ? -over * (1 - 1 / ratio) : 0;
    v = static_cast<float>(v * std::pow(10.0, gain_db / 20) * makeup);
  }
}

void soft_limit(Samples& x, double knee, double ceiling) {
  const double room = ceiling - knee;
  for (auto& v : x) {
    const double a = std::fabs(v);
    if (a <= knee) continue;
    const double y = knee + room * std::tanh((a - knee) / room);
    v = static_cast<float>(v < 0 ? -y : y);
  }
}

std::vector<std::string> AirChain::conditions() const {
  std::vector<std::string> c;
  if (speed != 1) c.push_back("speed");
  if (tempo != 1) {
    const double pct = std::fabs(tempo >= 1 ? tempo - 1 : 1 / tempo - 1) * 100;
    c.push_back(std::string("tempo ") + stretcher_name(stretcher));
    c.push_back(pct < 2 ? "tempo 0.5-2 %" : pct < 3.5 ? "tempo 2-3.5 %" : "tempo 3.5-5 %");
  }
  if (coverage < 1) c.push_back("truncated");
  c.push_back(telephone ? "telephone" : "eq");
  if (compressed) c.push_back("compressed");
  if (polarity < 0) c.push_back("polarity");
  if (fade_in_s > 0 || fade_out_s > 0) c.push_back("crossfade");
  c.push_back(std::string("noise ") + noise_colour_name(noise));
  return c;
}

AirChain draw_chain(Rng& rng, const ChainOdds& odds) {
  AirChain c;
  if (rng.uniform() < odds.speed) {
    const double pct = rng.uniform(0.5, 4.0);
    c.speed = rng.uniform() < 0.5 ? 1 + pct / 100 : 1 / (1 + pct / 100);
  }
  if (rng.uniform() < odds.truncate) c.coverage = rng.uniform(0.4, 0.9);
  c.eq.push_back({EqStage::highpass, rng.uniform(40, 200), 0.707, 0});
  c.eq.push_back({EqStage::lowpass, rng.uniform(4000, 15000), 0.707, 0});
  c.eq.push_back({EqStage::low_shelf, rng.uniform(80, 300), 0.707, rng.uniform(-6, 6)});
  c.eq.push_back({EqStage::high_shelf, rng.uniform(3000, 8000), 0.707, rng.uniform(-6, 6)});
  for (int k = 0, n = 1 + static_cast<int>(rng.next() % 2); k < n; ++k)
    c.eq.push_back({EqStage::peak, rng.uniform(300, 5000), rng.uniform(0.7, 3), rng.uniform(-8, 8)});
  if (rng.uniform() < odds.telephone) {
    c.telephone = true;
    for (int k = 0; k < 2; ++k) {  // 4th order each side
      c.eq.push_back({EqStage::highpass, 300, 0.707, 0});
      c.eq.push_back({EqStage::lowpass, 3400, 0.707, 0});
    }
  }
  if (rng.uniform() < odds.compress) {
    c.compressed = true;
    // Broadcast processing: fast attack, ratios from firm to brick-wall.
    c.comp_threshold_rel_db = rng.uniform(-15, -3);
    c.comp_ratio = rng.uniform(3, 12);
    c.comp_attack_ms = rng.uniform(0.5, 10);
    c.comp_release_ms = rng.uniform(40, 300);
  }
  c.gain_db = rng.uniform(-12, 6);
  c.polarity = rng.uniform() < odds.polarity ? -1 : 1;
  if (rng.uniform() < odds.crossfade) c.fade_in_s = rng.uniform(0.2, 1.5);
  if (rng.uniform() < odds.crossfade) c.fade_out_s = rng.uniform(0.2, 1.5);
  const double u = rng.uniform();
  c.snr_db = u < odds.snr_very_low ? rng.uniform(0, 1.5)
             : u < odds.snr_very_low + odds.snr_low ? rng.uniform(1.5, 3)
                                                     : rng.uniform(3, 20);
  c.noise = static_cast<NoiseColour>(rng.next() % 3);
  c.noise_seed = rng.next();
  if (c.speed == 1 && odds.tempo > 0) {
    Rng t(c.noise_seed ^ 0x9e3779b97f4a7c15ULL);
    if (t.uniform() < odds.tempo) {
      const double pct = t.uniform(0.5, 5.0);
      c.tempo = t.uniform() < 0.5 ? 1 + pct / 100 : 1 / (1 + pct / 100);
      c.stretcher = t.uniform() < 0.5 ? AirChain::Stretcher::sox : AirChain::Stretcher::rubberband;
    }
  }
  return c;
}

Samples render_chain(const Samples& master, double master_rate_hz, const AirChain& c, double out_rate_hz) {
  // Resampling to the logger's rate and the speed change in one step: the
  // master's samples taken as if at master_rate * speed.
  Samples x = resample_all(master, master_rate_hz * c.speed, out_rate_hz);
  if (c.tempo != 1) x = stretch(x, out_rate_hz, c.tempo, c.stretcher);
  if (x.empty()) return x;
  if (c.coverage < 1) x.resize(static_cast<size_t>(c.coverage * static_cast<double>(x.size())));
  for (const auto& s : c.eq) {
    const double nyq = out_rate_hz * 0.45;
    if (s.f_hz >= nyq) continue;  // a filter above the band does nothing at this rate
    Biquad q;
    switch (s.kind) {
      case EqStage::highpass: q = Biquad::highpass(s.f_hz, s.q, out_rate_hz); break;
      case EqStage::lowpass: q = Biquad::lowpass(s.f_hz, s.q, out_rate_hz); break;
      case EqStage::peak: q = Biquad::peak(s.f_hz, s.q, s.gain_db, out_rate_hz); break;
      case EqStage::low_shelf: q = Biquad::low_shelf(s.f_hz, s.gain_db, out_rate_hz); break;
      case EqStage::high_shelf: q = Biquad::high_shelf(s.f_hz, s.gain_db, out_rate_hz); break;
    }
    q.apply(x);
  }
  if (c.compressed) {
    const double level_db = 20 * std::log10(rms(x) + 1e-12);
    const double thr = level_db + c.comp_threshold_rel_db;
    compress(x, out_rate_hz, thr, c.comp_ratio, c.comp_attack_ms, c.comp_release_ms, 0);
  }
  set_rms(x, 0.1);
  const double g = c.polarity * std::pow(10.0, c.gain_db / 20);
  for (auto& v : x) v = static_cast<float>(v * g);
  return x;
}

}  // namespace godwit::synth
