#include "speed_refiner.h"

#include <algorithm>
#include <cmath>
#include <complex>
#include <numeric>

#include "godwit/audio/resampler.h"
#include "envelope_search.h"
#include "search/noise_floor.h"
#include "segment_line.h"

namespace godwit::detail {
namespace {

// Pearson of the whole of `m` at span offsets o + d, d in [-n, n] samples;
// parabolic peak.
std::optional<std::pair<double, double>> full_score(const Samples& m, const Samples& span, double o, int n) {
  const int64_t base = static_cast<int64_t>(std::llround(o));
  double mean = 0;
  for (float v : m) mean += v;
  mean /= static_cast<double>(m.size());
  double norm = 0;
  for (float v : m) norm += (v - mean) * (v - mean);
  if (!(norm > 0)) return std::nullopt;
  std::vector<double> r(static_cast<size_t>(2 * n + 1), 0.0);
  for (int d = -n; d <= n; ++d) {
    const int64_t k = base + d;
    if (k < 0 || k + static_cast<int64_t>(m.size()) > static_cast<int64_t>(span.size())) return std::nullopt;
    const float* x = span.data() + k;
    double dot = 0, s1 = 0, s2 = 0;
    for (size_t i = 0; i < m.size(); ++i) {
      dot += (m[i] - mean) * x[i];
      s1 += x[i];
      s2 += static_cast<double>(x[i]) * x[i];
    }
    const double e = s2 - s1 * s1 / static_cast<double>(m.size());
    if (e > 1e-12) r[static_cast<size_t>(d + n)] = std::clamp(dot / std::sqrt(e * norm), -1.0, 1.0);
  }
  const auto [best, at] = abs_peak(r);
  return std::make_pair(static_cast<double>(base) + at - n, r[best]);
}

// `m` delayed by `frac` of a sample (band-limited: a phase ramp on its
// zero-padded spectrum), so that its samples fall on the span's grid.
Samples fractional_delay(FftPlans& plans, const Samples& m, double frac) {
  size_t L = 256;
  while (L < m.size() + 64) L *= 2;
  const FftPlan& p = plans.get(L);
  RealBuffer a = alloc_real(L);
  ComplexBuffer fa = alloc_complex(L / 2 + 1);
  std::fill_n(a.get(), L, 0.0f);
  std::copy(m.begin(), m.end(), a.get());
  fftwf_execute_dft_r2c(p.forward, a.get(), as_fftw(fa.get()));
  const double w = -2.0 * M_PI * frac / static_cast<double>(L);
  for (size_t k = 0; k < L / 2; ++k) {
    const double ph = w * static_cast<double>(k);
    fa[k] *= std::complex<float>(static_cast<float>(std::cos(ph) / static_cast<double>(L)),
                                 static_cast<float>(std::sin(ph) / static_cast<double>(L)));
  }
  fa[L / 2] = 0;  // Nyquist: no real delayed value
  fftwf_execute_dft_c2r(p.inverse, as_fftw(fa.get()), a.get());
  return Samples(a.get(), a.get() + m.size());
}

// Pearson of `m` placed at span offset `o` (sub-sample): the same for an
// airing whatever the phase of the span's sample grid against it.
std::optional<double> score_at(FftPlans& plans, const Samples& m, const Samples& span, double o) {
  const double base = std::floor(o);
  const auto k = static_cast<int64_t>(base);
  if (k < 0 || k + static_cast<int64_t>(m.size()) > static_cast<int64_t>(span.size())) return std::nullopt;
  const Samples d = fractional_delay(plans, m, o - base);
  double mean = 0;
  for (float v : d) mean += v;
  mean /= static_cast<double>(d.size());
  const float* x = span.data() + k;
  double dot = 0, norm = 0, s1 = 0, s2 = 0;
  for (size_t i = 0; i < d.size(); ++i) {
    const double c = d[i] - mean;
    dot += c * x[i];
    norm += c * c;
    s1 += x[i];
    s2 += static_cast<double>(x[i]) * x[i];
  }
  const double e = s2 - s1 * s1 / static_cast<double>(d.size());
  if (!(norm > 0) || !(e > 1e-12)) return std::nullopt;
  return std::clamp(dot / std::sqrt(e * norm), -1.0, 1.0);
}

}  // namespace

Samples at_speed(const Samples& master, double rate_hz, double speed) {
  return resample_all(master, rate_hz * speed, rate_hz);
}

std::optional<SpeedFit> refine_speed(FftPlans& plans, const Samples& master, const Samples& span, double rate_hz,
                                     const SpeedSeed& seed, const EnvelopeBands& bands) {
  if (master.size() < 4096 || span.size() < 4096) return std::nullopt;
  // Step 2: envelopes at 50 frames/s. Centre first (speed errors only
  // blur it), then speed, then centre again.
  EnvelopeSearch env(plans, master, span, rate_hz, bands);
  double s = seed.speed;
  double centre = seed.offset + env.centre_tau() / s;
  const double hop = static_cast<double>(kEnvHop);
  centre = grid_max([&](double c) { return env.score(c, s); }, centre, hop / 2, 12).first;
  const double ds = std::max(seed.speed_step / 6, 1e-4);
  s = std::exp(grid_max([&](double ls) { return env.score(centre, std::exp(ls)); }, std::log(s), ds, 4).first);
  centre = grid_max([&](double c) { return env.score(c, s); }, centre, hop / 4, 4).first;
  double offset = centre - env.centre_tau() / s;

  // Step 3: segments at the sample level, 0.25 s then 1 s.
  struct Pass {
    double seg_s, radius_s, min_score;
  };
  const Pass passes[] = {{0.25, 0.04, 0.2}, {1.0, 0.002, 0.2}};
  size_t used = 0;
  for (const Pass& p : passes) {
    const Samples m = at_speed(master, rate_hz, s);
    const size_t seg = static_cast<size_t>(p.seg_s * rate_hz);
    const size_t radius = std::max<size_t>(4, static_cast<size_t>(p.radius_s * rate_hz));
    const auto hits = land_segments(plans, m, span, offset, seg, radius);
    // Inliers within 2 samples; the fit must span a fifth of the master.
    const auto line = fit_line(hits, p.min_score, 2.0, 0.2 * static_cast<double>(m.size()));
    if (!line) return std::nullopt;
    // Sample u of m lands at offset + u + a + b (u - centre).
    offset += line->a - line->b * line->centre;
    s /= 1.0 + line->b;
    used = line->used;
  }
  const Samples m = at_speed(master, rate_hz, s);
  const auto fs = full_score(m, span, offset, 3);
  if (!fs) return std::nullopt;
  // The score at the peak's sub-sample offset, not at the nearest sample:
  // off the grid by half a sample, a full-band airing would score several
  // hundredths lower, by the phase of where its span was read.
  const auto score = score_at(plans, m, span, fs->first);
  if (!score) return std::nullopt;
  SpeedFit fit;
  fit.speed = s;
  fit.offset = fs->first;
  fit.score = *score;
  fit.polarity = *score < 0 ? -1 : 1;
  fit.segments = used;
  return fit;
}

}  // namespace godwit::detail
