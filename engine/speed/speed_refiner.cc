// Over 400 lines: the sample-level fit is one pipeline (segments, consensus line, fractional delay, rescoring).
#include "speed_refiner.h"

#include <algorithm>
#include <cmath>
#include <complex>
#include <numeric>

#include "godwit/audio/resampler.h"
#include "search/noise_floor.h"

namespace godwit::detail {
namespace {

constexpr size_t kEnvWindow = 512;  // 64 ms at 8 kHz
constexpr size_t kEnvHop = 80;      // 10 ms at 8 kHz

// Master envelope, each band zero-mean, unit norm over all bands.
struct NormEnvelope {
  std::vector<float> v;  // frames x bands
  size_t frames = 0, bands = 0;
};

NormEnvelope normalized(std::vector<float> env, size_t frames, size_t bands) {
  std::vector<double> mean(bands, 0.0);
  for (size_t j = 0; j < frames; ++j)
    for (size_t b = 0; b < bands; ++b) mean[b] += env[j * bands + b];
  for (double& m : mean) m /= static_cast<double>(std::max<size_t>(1, frames));
  double norm = 0;
  for (size_t j = 0; j < frames; ++j)
    for (size_t b = 0; b < bands; ++b) {
      env[j * bands + b] -= static_cast<float>(mean[b]);
      norm += static_cast<double>(env[j * bands + b]) * env[j * bands + b];
    }
  const float s = norm > 0 ? static_cast<float>(1.0 / std::sqrt(norm)) : 0.0f;
  for (float& v : env) v *= s;
  return {std::move(env), frames, bands};
}

// Step 2: envelope correlation at 50 frames/s. The recording's band values
// at speed s are read once per span frame; positions between frames are
// interpolated. Parametrized by the master's centre, so that offset and
// speed errors are nearly independent and can be searched one at a time.
class EnvelopeSearch {
 public:
  EnvelopeSearch(FftPlans& plans, const Samples& master, const Samples& span, double rate_hz,
                 const EnvelopeBands& bands)
      : frames_(plans, rate_hz, kEnvWindow, kEnvHop), edges_(bands.edges_hz(rate_hz)), bands_(bands.count) {
    size_t n = 0;
    auto env = envelope_of(plans, master, rate_hz, kEnvWindow, kEnvHop, kEnvHop, bands, n);
    tmpl_ = normalized(std::move(env), n, bands_);
    frames_.push(span.data(), span.size());
    centre_tau_ = 0.5 * static_cast<double>(kEnvWindow) + 0.5 * static_cast<double>(n > 0 ? n - 1 : 0) * kEnvHop;
  }

  size_t frames() const { return tmpl_.frames; }

  // Score with the master's centre frame at span time `centre` and speed s.
  double score(double centre, double s) {
    if (tmpl_.frames < 8) return 0;
    const std::vector<float>& r = rows(s);
    const size_t nf = static_cast<size_t>(frames_.end_frame());
    std::vector<double> sum(bands_, 0.0), sum2(bands_, 0.0);
    double dot = 0;
    std::vector<float> w(bands_);
    for (size_t j = 0; j < tmpl_.frames; ++j) {
      const double tau = 0.5 * static_cast<double>(kEnvWindow) + static_cast<double>(j * kEnvHop);
      const double t = centre + (tau - centre_tau_) / s;
      const double q = frames_.frame_at(t);
      if (!(q >= 0) || q + 1 >= static_cast<double>(nf)) return 0;
      const size_t f0 = static_cast<size_t>(q);
      const float a = static_cast<float>(q - static_cast<double>(f0));
      const float* x0 = &r[f0 * bands_];
      const float* x1 = x0 + bands_;
      const float* tj = &tmpl_.v[j * bands_];
      for (size_t b = 0; b < bands_; ++b) {
        const float v = x0[b] + a * (x1[b] - x0[b]);
        dot += static_cast<double>(tj[b]) * v;
        sum[b] += v;
        sum2[b] += static_cast<double>(v) * v;
      }
    }
    double e = 0;
    for (size_t b = 0; b < bands_; ++b) e += sum2[b] - sum[b] * sum[b] / static_cast<double>(tmpl_.frames);
    return e > 1e-12 ? dot / std::sqrt(e) : 0.0;
  }

  double centre_tau() const { return centre_tau_; }

 private:
  const std::vector<float>& rows(double s) {
    if (s == rows_speed_) return rows_;
    rows_speed_ = s;
    const size_t nf = static_cast<size_t>(frames_.end_frame());
    rows_.assign(nf * bands_, 0.0f);
    for (size_t f = 0; f < nf; ++f) frames_.envelope_at(frames_.centre(static_cast<double>(f)), edges_, s, &rows_[f * bands_]);
    return rows_;
  }

  SpectralFrames frames_;
  std::vector<double> edges_;
  size_t bands_;
  NormEnvelope tmpl_;
  double centre_tau_ = 0;
  double rows_speed_ = -1;
  std::vector<float> rows_;
};

// Vertex offset in (-0.5, 0.5) of the parabola through y0, y1, y2 around
// a maximum y1 (0 when they do not bend down).
double parabolic_delta(double y0, double y1, double y2) {
  const double den = y0 - 2 * y1 + y2;
  return den < 0 ? std::clamp(0.5 * (y0 - y2) / den, -0.5, 0.5) : 0.0;
}

// Index of the largest |r[k]|, refined by a parabola through |r| around it.
std::pair<size_t, double> abs_peak(const std::vector<double>& r) {
  size_t best = 0;
  for (size_t k = 1; k < r.size(); ++k)
    if (std::fabs(r[k]) > std::fabs(r[best])) best = k;
  double delta = 0;
  if (best > 0 && best + 1 < r.size())
    delta = parabolic_delta(std::fabs(r[best - 1]), std::fabs(r[best]), std::fabs(r[best + 1]));
  return {best, static_cast<double>(best) + delta};
}

// Best of f over a grid x0 + i * dx, i in [-n, n], refined by a parabola.
template <class F>
std::pair<double, double> grid_max(F&& f, double x0, double dx, int n) {
  std::vector<double> v(static_cast<size_t>(2 * n + 1));
  for (int i = -n; i <= n; ++i) v[static_cast<size_t>(i + n)] = f(x0 + i * dx);
  const size_t best = static_cast<size_t>(std::max_element(v.begin(), v.end()) - v.begin());
  double delta = 0;
  if (best > 0 && best + 1 < v.size()) delta = parabolic_delta(v[best - 1], v[best], v[best + 1]);
  return {x0 + (static_cast<double>(best) - n + delta) * dx, v[best]};
}

struct SegmentHit {
  double at = 0;     // segment centre, in resampled-master samples
  double lag = 0;    // where it landed minus where it was predicted, samples
  double score = 0;  // signed peak Pearson
};

// Normalized correlation of seg (n samples, zero mean, unit norm) with
// every window of win (n + 2R samples), through one FFT product.
void local_ncc(FftPlans& plans, const float* seg, size_t n, const float* win, size_t radius, std::vector<double>& r) {
  const size_t span = n + 2 * radius;
  size_t L = 256;
  while (L < span + n) L *= 2;
  const FftPlan& p = plans.get(L);
  RealBuffer a = alloc_real(L), b = alloc_real(L), out = alloc_real(L);
  ComplexBuffer fa = alloc_complex(L / 2 + 1), fb = alloc_complex(L / 2 + 1);
  std::fill_n(a.get(), L, 0.0f);
  std::fill_n(b.get(), L, 0.0f);
  std::copy_n(seg, n, a.get());
  std::copy_n(win, span, b.get());
  fftwf_execute_dft_r2c(p.forward, a.get(), as_fftw(fa.get()));
  fftwf_execute_dft_r2c(p.forward, b.get(), as_fftw(fb.get()));
  for (size_t k = 0; k <= L / 2; ++k) fb[k] *= std::conj(fa[k]);
  fftwf_execute_dft_c2r(p.inverse, as_fftw(fb.get()), out.get());
  // Energy of each window about its mean.
  std::vector<double> s1(span + 1, 0.0), s2(span + 1, 0.0);
  for (size_t i = 0; i < span; ++i) {
    s1[i + 1] = s1[i] + win[i];
    s2[i + 1] = s2[i] + static_cast<double>(win[i]) * win[i];
  }
  r.assign(2 * radius + 1, 0.0);
  for (size_t k = 0; k <= 2 * radius; ++k) {
    const double m1 = s1[k + n] - s1[k];
    const double e = (s2[k + n] - s2[k]) - m1 * m1 / static_cast<double>(n);
    if (e > 1e-9 * static_cast<double>(n)) r[k] = std::clamp(out[k] / static_cast<double>(L) / std::sqrt(e), -1.0, 1.0);
  }
}

// Where each segment of `m` (the master at the current speed estimate)
// lands in `span`, predicted at span sample offset + u.
std::vector<SegmentHit> land_segments(FftPlans& plans, const Samples& m, const Samples& span, double offset,
                                      size_t seg_len, size_t radius) {
  std::vector<SegmentHit> hits;
  std::vector<float> seg(seg_len);
  std::vector<double> r;
  for (size_t u = 0; u + seg_len <= m.size(); u += seg_len) {
    const double pos = offset + static_cast<double>(u);
    const int64_t w0 = static_cast<int64_t>(std::llround(pos)) - static_cast<int64_t>(radius);
    if (w0 < 0 || w0 + static_cast<int64_t>(seg_len + 2 * radius) > static_cast<int64_t>(span.size())) continue;
    double mean = 0;
    for (size_t i = 0; i < seg_len; ++i) mean += m[u + i];
    mean /= static_cast<double>(seg_len);
    double norm = 0;
    for (size_t i = 0; i < seg_len; ++i) {
      seg[i] = static_cast<float>(m[u + i] - mean);
      norm += static_cast<double>(seg[i]) * seg[i];
    }
    if (!(norm > 1e-7 * static_cast<double>(seg_len))) continue;  // silent segment: no evidence
    const float inv = static_cast<float>(1.0 / std::sqrt(norm));
    for (float& v : seg) v *= inv;
    local_ncc(plans, seg.data(), seg_len, span.data() + w0, radius, r);
    const auto [best, at] = abs_peak(r);
    SegmentHit h;
    h.at = static_cast<double>(u) + 0.5 * static_cast<double>(seg_len);
    h.lag = static_cast<double>(w0) + at - pos;
    h.score = r[best];
    hits.push_back(h);
  }
  return hits;
}

struct LineFit {
  double a = 0, b = 0;  // lag = a + b * (at - centre)
  double centre = 0;
  size_t used = 0;
  int polarity = 1;
};

// The line lag = a + b (at - centre) that the most segments agree with
// (by squared score, within `tolerance` samples): every pair of clearly
// matching segments proposes a line, the best supported one is refitted
// by weighted least squares on its inliers. Segments where the airing was
// cut off or drowned land anywhere; they may be the majority.
std::optional<LineFit> fit_line(const std::vector<SegmentHit>& hits, double min_score, double tolerance,
                                double min_spread) {
  int pos = 0, neg = 0;
  for (const auto& h : hits)
    if (std::fabs(h.score) >= min_score) (h.score > 0 ? pos : neg)++;
  LineFit f;
  f.polarity = neg > pos ? -1 : 1;
  std::vector<const SegmentHit*> use;
  for (const auto& h : hits)
    if (f.polarity * h.score >= min_score) use.push_back(&h);
  if (use.size() < 4) return std::nullopt;
  auto support = [&](double a, double b, double centre, std::vector<const SegmentHit*>* inliers) {
    double w = 0;
    for (const auto* h : use)
      if (std::fabs(h->lag - a - b * (h->at - centre)) <= tolerance) {
        w += h->score * h->score;
        if (inliers) inliers->push_back(h);
      }
    return w;
  };
  double best_w = -1, best_a = 0, best_b = 0, best_c = 0;
  for (size_t i = 0; i < use.size(); ++i)
    for (size_t j = i + 1; j < use.size(); ++j) {
      const double dx = use[j]->at - use[i]->at;
      if (dx < min_spread) continue;
      const double b = (use[j]->lag - use[i]->lag) / dx;
      const double w = support(use[i]->lag, b, use[i]->at, nullptr);
      if (w > best_w) best_w = w, best_a = use[i]->lag, best_b = b, best_c = use[i]->at;
    }
  if (best_w <= 0) return std::nullopt;
  std::vector<const SegmentHit*> in;
  for (int iter = 0; iter < 3; ++iter) {
    in.clear();
    support(best_a, best_b, best_c, &in);
    if (in.size() < 4) return std::nullopt;
    double sw = 0, sx = 0;
    for (const auto* h : in) sw += h->score * h->score, sx += h->score * h->score * h->at;
    const double centre = sx / sw;
    double sxx = 0, sxy = 0, sy = 0;
    for (const auto* h : in) {
      const double w = h->score * h->score, x = h->at - centre;
      sxx += w * x * x, sxy += w * x * h->lag, sy += w * h->lag;
    }
    if (!(sxx > 0)) return std::nullopt;
    best_b = sxy / sxx;
    best_a = sy / sw;
    best_c = centre;
  }
  double lo = 1e300, hi = -1e300;
  for (const auto* h : in) lo = std::min(lo, h->at), hi = std::max(hi, h->at);
  if (hi - lo < min_spread) return std::nullopt;
  f.a = best_a;
  f.b = best_b;
  f.centre = best_c;
  f.used = in.size();
  return f;
}

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
