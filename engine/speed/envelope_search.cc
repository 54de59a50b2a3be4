#include "envelope_search.h"

#include <algorithm>
#include <cmath>

namespace godwit::detail {
namespace {

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

}  // namespace

EnvelopeSearch::EnvelopeSearch(FftPlans& plans, const Samples& master, const Samples& span, double rate_hz,
                               const EnvelopeBands& bands, bool shift_spectrum)
    : frames_(plans, rate_hz, kEnvWindow, kEnvHop), edges_(bands.edges_hz(rate_hz)), bands_(bands.count),
      shift_(shift_spectrum) {
  size_t n = 0;
  auto env = envelope_of(plans, master, rate_hz, kEnvWindow, kEnvHop, kEnvHop, bands, n);
  tmpl_ = normalized(std::move(env), n, bands_);
  frames_.push(span.data(), span.size());
  centre_tau_ = 0.5 * static_cast<double>(kEnvWindow) + 0.5 * static_cast<double>(n > 0 ? n - 1 : 0) * kEnvHop;
}

double EnvelopeSearch::score(double centre, double s, size_t stride) {
  if (tmpl_.frames < 8) return 0;
  stride = std::max<size_t>(1, stride);
  size_t used = 0;
  const std::vector<float>& r = rows(s);
  const size_t nf = static_cast<size_t>(frames_.end_frame());
  std::vector<double> sum(bands_, 0.0), sum2(bands_, 0.0);
  double dot = 0;
  std::vector<float> w(bands_);
  for (size_t j = 0; j < tmpl_.frames; j += stride) {
    ++used;
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
  for (size_t b = 0; b < bands_; ++b) e += sum2[b] - sum[b] * sum[b] / static_cast<double>(used);
  return e > 1e-12 ? dot / std::sqrt(e) : 0.0;
}

const std::vector<float>& EnvelopeSearch::rows(double s) {
  if (!shift_) s = 1;  // band edges in place: the rows do not depend on the scale
  if (s == rows_speed_) return rows_;
  rows_speed_ = s;
  const size_t nf = static_cast<size_t>(frames_.end_frame());
  rows_.assign(nf * bands_, 0.0f);
  for (size_t f = 0; f < nf; ++f) frames_.envelope_at(frames_.centre(static_cast<double>(f)), edges_, shift_ ? s : 1.0, &rows_[f * bands_]);
  return rows_;
}

double parabolic_delta(double y0, double y1, double y2) {
  const double den = y0 - 2 * y1 + y2;
  return den < 0 ? std::clamp(0.5 * (y0 - y2) / den, -0.5, 0.5) : 0.0;
}

}  // namespace godwit::detail
