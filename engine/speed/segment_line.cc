#include "segment_line.h"

#include <algorithm>
#include <cmath>
#include <complex>

#include "envelope_search.h"

namespace godwit::detail {

std::pair<size_t, double> abs_peak(const std::vector<double>& r) {
  size_t best = 0;
  for (size_t k = 1; k < r.size(); ++k)
    if (std::fabs(r[k]) > std::fabs(r[best])) best = k;
  double delta = 0;
  if (best > 0 && best + 1 < r.size())
    delta = parabolic_delta(std::fabs(r[best - 1]), std::fabs(r[best]), std::fabs(r[best + 1]));
  return {best, static_cast<double>(best) + delta};
}

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

std::vector<SegmentHit> land_segments(FftPlans& plans, const Samples& m, const Samples& span, double offset,
                                      size_t seg_len, size_t radius, size_t step) {
  if (step == 0) step = seg_len;
  std::vector<SegmentHit> hits;
  std::vector<float> seg(seg_len);
  std::vector<double> r;
  for (size_t u = 0; u + seg_len <= m.size(); u += step) {
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


std::optional<LineFit> fit_line(const std::vector<SegmentHit>& hits, double min_score, double tolerance,
                                double min_spread, size_t max_proposers) {
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
  std::vector<const SegmentHit*> prop = use;
  if (max_proposers > 0 && prop.size() > max_proposers) {
    std::partial_sort(prop.begin(), prop.begin() + static_cast<std::ptrdiff_t>(max_proposers), prop.end(),
                      [&](const auto* x, const auto* y) { return f.polarity * x->score > f.polarity * y->score; });
    prop.resize(max_proposers);
  }
  double best_w = -1, best_a = 0, best_b = 0, best_c = 0;
  for (size_t i = 0; i < prop.size(); ++i)
    for (size_t j = 0; j < prop.size(); ++j) {
      const double dx = prop[j]->at - prop[i]->at;
      if (dx < min_spread) continue;
      const double b = (prop[j]->lag - prop[i]->lag) / dx;
      const double w = support(prop[i]->lag, b, prop[i]->at, nullptr);
      if (w > best_w) best_w = w, best_a = prop[i]->lag, best_b = b, best_c = prop[i]->at;
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
}  // namespace godwit::detail
