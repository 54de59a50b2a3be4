// EnvelopeSearch: step 2 of the speed search (speed_search.h), the
// envelope correlation at 50 frames/s of a master against a span around a
// coarse peak, and the small grid searches it is driven with.
//
// The span's band values at time scale s are read once per span frame;
// positions between frames are interpolated. With `shift_spectrum` the band
// edges are scaled by s as well (an airing played s times faster: pitch
// moves with duration); without it they are not (a tempo change that kept
// the pitch). Parametrized by the master's centre, so that offset and time
// scale errors are nearly independent and can be searched one at a time.
//
// Thread contract: one per refinement; plans are shared safely.
#pragma once

#include <algorithm>
#include <vector>

#include "spectral_frames.h"
#include "godwit/core/types.h"

namespace godwit::detail {

constexpr size_t kEnvWindow = 512;  // 64 ms at 8 kHz
constexpr size_t kEnvHop = 80;      // 10 ms at 8 kHz

// Master envelope, each band zero-mean, unit norm over all bands.
struct NormEnvelope {
  std::vector<float> v;  // frames x bands
  size_t frames = 0, bands = 0;
};

class EnvelopeSearch {
 public:
  EnvelopeSearch(FftPlans& plans, const Samples& master, const Samples& span, double rate_hz,
                 const EnvelopeBands& bands, bool shift_spectrum = true);

  size_t frames() const { return tmpl_.frames; }
  // Score with the master's centre frame at span time `centre` and time
  // scale s (the airing runs s times faster). With `stride` k > 1, only
  // every k-th frame of the master is used: a cheaper score for coarse
  // sweeps, whose grid is wider than k frames (k times less work).
  double score(double centre, double s, size_t stride = 1);
  double centre_tau() const { return centre_tau_; }

 private:
  const std::vector<float>& rows(double s);

  SpectralFrames frames_;
  std::vector<double> edges_;
  size_t bands_;
  bool shift_;
  NormEnvelope tmpl_;
  double centre_tau_ = 0;
  double rows_speed_ = -1;  // the rows' scale (always 1 when the spectrum is not shifted)
  std::vector<float> rows_;
};

// Vertex offset in (-0.5, 0.5) of the parabola through y0, y1, y2 around
// a maximum y1 (0 when they do not bend down).
double parabolic_delta(double y0, double y1, double y2);

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

}  // namespace godwit::detail
