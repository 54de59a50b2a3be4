#include "foreground_contrast.h"

#include <algorithm>
#include <cmath>
#include <complex>
#include <numbers>

#include "search/pearson.h"
#include "speed/spectral_frames.h"

namespace godwit::detail {
namespace {

constexpr double kForegroundRatio = 4.0;  // 6 dB above the band's median frame energy
constexpr size_t kMinForeground = 6, kMinBackground = 12;  // frames per band
constexpr size_t kMinBands = 4;

// Mean over bands of the Pearson correlation, over frames, of the log
// share of the band in its frame's energy, master against airing.
double shape_match(const std::vector<std::vector<double>>& master_e, const std::vector<std::vector<double>>& airing_e) {
  constexpr double kShareFloor = 1e-6;  // -60 dB: a band silent in a frame
  const size_t n_frames = master_e.size(), n_bands = n_frames ? master_e[0].size() : 0;
  std::vector<double> total_m(n_frames, 0), total_a(n_frames, 0);
  for (size_t f = 0; f < n_frames; ++f)
    for (size_t b = 0; b < n_bands; ++b) total_m[f] += master_e[f][b], total_a[f] += airing_e[f][b];
  double sum = 0;
  size_t used = 0;
  std::vector<float> x, y;
  for (size_t b = 0; b < n_bands; ++b) {
    x.clear(), y.clear();
    for (size_t f = 0; f < n_frames; ++f) {
      if (!(total_m[f] > 0) || !(total_a[f] > 0)) continue;
      x.push_back(static_cast<float>(std::log(master_e[f][b] / total_m[f] + kShareFloor)));
      y.push_back(static_cast<float>(std::log(airing_e[f][b] / total_a[f] + kShareFloor)));
    }
    if (x.size() < kMinForeground + kMinBackground) continue;
    const double r = pearson(x.data(), y.data(), x.size(), 1e-12);
    if (r == 0.0) continue;  // a band without variance: no evidence
    sum += r;
    ++used;
  }
  return used ? sum / static_cast<double>(used) : 0.0;
}

}  // namespace

std::optional<ForegroundContrast> foreground_contrast(FftPlans& plans, const Samples& master, const Samples& airing,
                                                      double rate_hz, const std::vector<bool>& aired, double segment_s,
                                                      size_t use_from, size_t use_to, double edge_s) {
  // About 32 ms frames, half overlapping.
  size_t window = 256;
  while (static_cast<double>(window) < 0.032 * rate_hz) window *= 2;
  const size_t hop = window / 2, bins = window / 2 + 1;
  const size_t len = std::min(master.size(), airing.size());
  if (len < window * 8) return std::nullopt;
  use_to = std::min(use_to, len);
  const size_t edge = static_cast<size_t>(edge_s * rate_hz);
  if (use_to > use_from && use_to - use_from >= 3 * edge) use_from += edge, use_to -= edge;
  const FftPlan& plan = plans.get(window);
  RealBuffer frame = alloc_real(window);
  ComplexBuffer xs = alloc_complex(bins), ys = alloc_complex(bins);
  std::vector<float> hann(window);
  for (size_t i = 0; i < window; ++i)
    hann[i] = static_cast<float>(0.5 - 0.5 * std::cos(2 * std::numbers::pi * (static_cast<double>(i) + 0.5) /
                                                      static_cast<double>(window)));
  const std::vector<double> edges = EnvelopeBands{}.edges_hz(rate_hz);
  const size_t n_bands = edges.size() - 1;
  std::vector<size_t> lo(n_bands), hi(n_bands);
  for (size_t b = 0; b < n_bands; ++b) {
    lo[b] = static_cast<size_t>(std::ceil(edges[b] * static_cast<double>(window) / rate_hz));
    hi[b] = std::max(lo[b] + 1, static_cast<size_t>(std::ceil(edges[b + 1] * static_cast<double>(window) / rate_hz)));
    hi[b] = std::min(hi[b], bins);
  }
  // Per frame: master band energy; per bin and frame: the cross-spectrum
  // and the airing's power (kept for the two passes).
  std::vector<std::vector<double>> band_e, band_ey;  // [frame][band]: master's and airing's band energy
  std::vector<std::vector<std::complex<float>>> cross;  // [frame][bin], bins up to hi.back()
  std::vector<std::vector<float>> xx, yy;
  const size_t top = hi.back();
  for (size_t start = use_from; start + window <= use_to; start += hop) {
    if (!aired.empty()) {
      const size_t seg = static_cast<size_t>(static_cast<double>(start + window / 2) / (segment_s * rate_hz));
      if (seg >= aired.size() || !aired[seg]) continue;
    }
    for (size_t i = 0; i < window; ++i) frame[i] = master[start + i] * hann[i];
    fftwf_execute_dft_r2c(plan.forward, frame.get(), as_fftw(xs.get()));
    for (size_t i = 0; i < window; ++i) frame[i] = airing[start + i] * hann[i];
    fftwf_execute_dft_r2c(plan.forward, frame.get(), as_fftw(ys.get()));
    std::vector<std::complex<float>> c(top);
    std::vector<float> px(top), py(top);
    for (size_t k = 0; k < top; ++k) {
      c[k] = std::conj(xs[k]) * ys[k];
      px[k] = std::norm(xs[k]);
      py[k] = std::norm(ys[k]);
    }
    std::vector<double> e(n_bands, 0.0), ey(n_bands, 0.0);
    for (size_t b = 0; b < n_bands; ++b)
      for (size_t k = lo[b]; k < hi[b]; ++k) e[b] += px[k], ey[b] += py[k];
    band_e.push_back(std::move(e));
    band_ey.push_back(std::move(ey));
    cross.push_back(std::move(c));
    xx.push_back(std::move(px));
    yy.push_back(std::move(py));
  }
  const size_t n_frames = band_e.size();
  if (n_frames < kMinForeground + kMinBackground) return std::nullopt;
  // Each bin's phase from all frames: the airing chain's fixed response.
  std::vector<std::complex<double>> phase(top);
  for (size_t k = 0; k < top; ++k) {
    std::complex<double> s = 0;
    for (size_t f = 0; f < n_frames; ++f) s += std::complex<double>(cross[f][k]);
    phase[k] = std::abs(s) > 0 ? std::conj(s) / std::abs(s) : 1.0;
  }
  ForegroundContrast out;
  out.shape_match = shape_match(band_e, band_ey);
  double sum_fg = 0, sum_bg = 0;
  for (size_t b = 0; b < n_bands; ++b) {
    std::vector<double> e;
    for (size_t f = 0; f < n_frames; ++f) e.push_back(band_e[f][b]);
    std::vector<double> sorted = e;
    std::nth_element(sorted.begin(), sorted.begin() + static_cast<long>(n_frames / 2), sorted.end());
    const double median = sorted[n_frames / 2];
    if (!(median > 0)) continue;
    double c_fg = 0, x_fg = 0, y_fg = 0, c_bg = 0, x_bg = 0, y_bg = 0;
    size_t n_fg = 0, n_bg = 0;
    for (size_t f = 0; f < n_frames; ++f) {
      const bool fg = e[f] >= kForegroundRatio * median, bg = e[f] <= median;
      if (!fg && !bg) continue;
      double c = 0, x = 0, y = 0;
      for (size_t k = lo[b]; k < hi[b]; ++k) {
        c += (std::complex<double>(cross[f][k]) * phase[k]).real();
        x += xx[f][k];
        y += yy[f][k];
      }
      if (fg) c_fg += c, x_fg += x, y_fg += y, ++n_fg;
      else c_bg += c, x_bg += x, y_bg += y, ++n_bg;
    }
    if (n_fg < kMinForeground || n_bg < kMinBackground || !(x_fg * y_fg > 0) || !(x_bg * y_bg > 0)) continue;
    const double fg = c_fg / std::sqrt(x_fg * y_fg), bg = c_bg / std::sqrt(x_bg * y_bg);
    sum_fg += fg;
    sum_bg += bg;
    ++out.bands;
  }
  if (out.bands < kMinBands) return std::nullopt;
  out.foreground = sum_fg / static_cast<double>(out.bands);
  out.background = sum_bg / static_cast<double>(out.bands);
  out.contrast = out.foreground - out.background;
  return out;
}

}  // namespace godwit::detail
