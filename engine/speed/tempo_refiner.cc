#include "tempo_refiner.h"

#include <algorithm>
#include <cmath>

#include "envelope_search.h"
#include "godwit/audio/resampler.h"
#include "search/pearson.h"
#include "segment_line.h"

namespace godwit::detail {
namespace {

constexpr double kFrameS = 0.032;
// A frame moves off its predecessor's place only to a match of at least
// kMoveScore that beats staying by kMoveGain (ours: on the tempo tests
// they keep the airings' scores within 0.01 and halve what programme
// after a cut scores).
constexpr double kMoveScore = 0.4;
constexpr double kMoveGain = 0.05;
// A candidate goes on to the segments only when its envelopes match by
// kMinEnvelopeScore, and to the confirmation only when kMinAgreeing of its
// segments agree with the first line. Ours: on the accuracy benchmark
// (seed 21, a 1 h day with 17 stretched airings, 90 coarse peaks) the
// airings scored 0.39-0.99 and 0.32-0.93, the peaks that were none
// 0.05-0.36 and 0.05-0.21; the confirmation alone decides the rest.
constexpr double kMinEnvelopeScore = 0.3;
constexpr double kMinAgreeing = 0.2;  // frames and segments: 32 ms (a stretcher copies 40-90 ms at a time)

size_t frame_len(double rate_hz) {
  size_t n = 64;
  while (static_cast<double>(n) < kFrameS * rate_hz) n *= 2;
  return n;
}

// `x[from, from + n)`, zeros outside x.
void read_padded(const Samples& x, int64_t from, size_t n, float* out) {
  for (size_t i = 0; i < n; ++i) {
    const int64_t k = from + static_cast<int64_t>(i);
    out[i] = k >= 0 && k < static_cast<int64_t>(x.size()) ? x[static_cast<size_t>(k)] : 0.0f;
  }
}

// Zero mean, unit norm in place; false when (nearly) silent.
bool normalize(float* x, size_t n) {
  double mean = 0;
  for (size_t i = 0; i < n; ++i) mean += x[i];
  mean /= static_cast<double>(n);
  double norm = 0;
  for (size_t i = 0; i < n; ++i) {
    x[i] = static_cast<float>(x[i] - mean);
    norm += static_cast<double>(x[i]) * x[i];
  }
  if (!(norm > 1e-7 * static_cast<double>(n))) return false;
  const float inv = static_cast<float>(1.0 / std::sqrt(norm));
  for (size_t i = 0; i < n; ++i) x[i] *= inv;
  return true;
}

// Where each segment of the master (at its own pitch) lands in `span`:
// master sample tau is predicted at span sample offset + tau / tempo.
std::vector<SegmentHit> land_tempo_segments(FftPlans& plans, const Samples& master, const Samples& span, double offset,
                                            double tempo, size_t seg_len, size_t radius) {
  std::vector<SegmentHit> hits;
  std::vector<float> seg(seg_len);
  std::vector<double> r;
  for (size_t u = 0; u + seg_len <= master.size(); u += seg_len) {
    const double at = static_cast<double>(u) + 0.5 * static_cast<double>(seg_len);
    const double pos = offset + at / tempo - 0.5 * static_cast<double>(seg_len);
    const int64_t w0 = static_cast<int64_t>(std::llround(pos)) - static_cast<int64_t>(radius);
    if (w0 < 0 || w0 + static_cast<int64_t>(seg_len + 2 * radius) > static_cast<int64_t>(span.size())) continue;
    std::copy_n(master.data() + u, seg_len, seg.data());
    if (!normalize(seg.data(), seg_len)) continue;  // silent segment: no evidence
    local_ncc(plans, seg.data(), seg_len, span.data() + w0, radius, r);
    const auto [best, k] = abs_peak(r);
    SegmentHit h;
    h.at = at;
    h.lag = static_cast<double>(w0) + k - pos;
    h.score = r[best];
    hits.push_back(h);
  }
  return hits;
}

// Where each frame of air time takes the master from: centre of air frame
// j at j * hop samples of `airing`, of the master at `master_at[j]`
// samples (both at rate_hz). Frames of 2 * hop, hop = 16 ms.
struct Track {
  double hop_s = 0.016;
  std::vector<double> master_at_s;
};

Track track_of(FftPlans& plans, const Samples& master, const Samples& airing, double rate_hz, double tempo,
               double tolerance_s, int polarity) {
  const size_t n = frame_len(rate_hz), hop = n / 2, ctx = 2 * n;
  const size_t radius = std::max<size_t>(1, static_cast<size_t>(std::lround(tolerance_s * rate_hz)));
  const auto R = static_cast<int64_t>(radius);
  Track tr;
  tr.hop_s = static_cast<double>(hop) / rate_hz;
  std::vector<float> a(ctx), m(ctx + 2 * radius);
  std::vector<double> r;
  int64_t prev = 0;
  bool have_prev = false;
  for (int64_t ac = 0; ac < static_cast<int64_t>(airing.size()) + static_cast<int64_t>(hop); ac += static_cast<int64_t>(hop)) {
    const auto mc = static_cast<int64_t>(std::llround(static_cast<double>(ac) * tempo));
    if (mc - static_cast<int64_t>(n / 2) - R >= static_cast<int64_t>(master.size())) break;
    int64_t d = have_prev ? prev : 0;
    read_padded(airing, ac - static_cast<int64_t>(ctx / 2), ctx, a.data());
    if (normalize(a.data(), ctx)) {
      read_padded(master, mc - static_cast<int64_t>(ctx / 2) - R, ctx + 2 * radius, m.data());
      local_ncc(plans, a.data(), ctx, m.data(), radius, r);
      size_t best = 0;
      for (size_t k = 1; k < r.size(); ++k)
        if (polarity * r[k] > polarity * r[best]) best = k;
      // Stay where the previous frame was unless moving clearly helps (by
      // kMoveGain, to a match of kMoveScore or better): a stretcher's
      // copies last several frames, and every free move lets unrelated
      // audio (what aired after a cut, say) match a little better.
      const double stay = have_prev ? polarity * r[static_cast<size_t>(prev + R)] : -1.0;
      if (!have_prev || (polarity * r[best] >= kMoveScore && polarity * r[best] > stay + kMoveGain))
        d = static_cast<int64_t>(best) - R;
    }
    prev = d;
    have_prev = true;
    tr.master_at_s.push_back(static_cast<double>(mc + d) / rate_hz);
  }
  return tr;
}

// The master's frames where the track puts them, overlap-added (periodic
// Hann of two hops: they sum to one, to within the rounding of the hop
// at rates where it is not a whole number of samples), `len` samples at
// rate_hz.
Samples synthesize(const Samples& master, size_t len, double rate_hz, const Track& tr) {
  const auto hop = static_cast<int64_t>(std::llround(tr.hop_s * rate_hz));
  const size_t n = static_cast<size_t>(2 * hop);
  std::vector<float> window(n);
  for (size_t i = 0; i < n; ++i)
    window[i] = static_cast<float>(0.5 - 0.5 * std::cos(2 * M_PI * static_cast<double>(i) / static_cast<double>(n)));
  Samples out(len, 0.0f);
  for (size_t j = 0; j < tr.master_at_s.size(); ++j) {
    // Frame j centred at j * hop_s exactly (a rounded hop would drift).
    const int64_t f0 = std::llround(static_cast<double>(j) * tr.hop_s * rate_hz) - hop;
    const int64_t m0 = static_cast<int64_t>(std::llround(tr.master_at_s[j] * rate_hz)) - hop;
    for (size_t i = 0; i < n; ++i) {
      const int64_t o = f0 + static_cast<int64_t>(i), k = m0 + static_cast<int64_t>(i);
      if (o < 0 || o >= static_cast<int64_t>(len) || k < 0 || k >= static_cast<int64_t>(master.size())) continue;
      out[static_cast<size_t>(o)] += window[i] * master[static_cast<size_t>(k)];
    }
  }
  return out;
}

Samples aligned(FftPlans& plans, const Samples& master, const Samples& airing, double rate_hz, double tempo,
                double tolerance_s, int polarity) {
  return synthesize(master, airing.size(), rate_hz, track_of(plans, master, airing, rate_hz, tempo, tolerance_s, polarity));
}

}  // namespace

Samples aligned_master(FftPlans& plans, const Samples& master, const Samples& airing, double rate_hz, double tempo,
                       double tolerance_s, int polarity) {
  // The track is found at 8 kHz (what the search decided on; at 48 kHz
  // every frame would cost forty times more), then applied at rate_hz.
  constexpr double kTrackRate = 8000;
  const bool down = rate_hz > 1.5 * kTrackRate;
  const Samples m8 = down ? resample_all(master, rate_hz, kTrackRate) : Samples{};
  const Samples a8 = down ? resample_all(airing, rate_hz, kTrackRate) : Samples{};
  const Track tr = track_of(plans, down ? m8 : master, down ? a8 : airing, down ? kTrackRate : rate_hz, tempo,
                            tolerance_s, polarity < 0 ? -1 : 1);
  return synthesize(master, airing.size(), rate_hz, tr);
}

std::optional<TempoFit> refine_tempo(FftPlans& plans, const Samples& master, const Samples& span, double rate_hz,
                                     const SpeedSeed& seed, const EnvelopeBands& bands, double max_deviation) {
  if (master.size() < 4096 || span.size() < 4096) return std::nullopt;
  // Step 1: envelopes at 50 frames/s, band edges in place. The coarse
  // grid read shifted band edges, which a tempo change does not shift: its
  // peak leans towards 1 by up to the tempo change itself, and its centre
  // by as much as that error moves the master's ends. So a joint sweep of
  // tempo and centre first (the span's rows are read once: with the band
  // edges in place they do not depend on the tempo), then the fine one.
  EnvelopeSearch env(plans, master, span, rate_hz, bands, false);
  const double hop = static_cast<double>(kEnvHop);
  double t = seed.speed;
  double centre = seed.offset + env.centre_tau() / t;
  {
    const double wide = std::log1p(std::fabs(seed.speed - 1) + seed.speed_step) / 12;
    double best = -2, best_t = t, best_c = centre;
    for (int k = -12; k <= 12; ++k) {
      const double tk = seed.speed * std::exp(wide * k);
      // Every 4th master frame (the grid steps 2 frames; 30 s of master
      // still give 375 frames per band): a quarter of the work of the
      // sweep, which is most of what a coarse peak that is no airing costs.
      const auto [c, v] = grid_max([&](double x) { return env.score(x, tk, 4); }, centre, 2 * hop, 10);
      if (v > best) best = v, best_t = tk, best_c = c;
    }
    t = best_t;
    centre = best_c;
  }
  centre = grid_max([&](double c) { return env.score(c, t); }, centre, hop / 2, 6).first;
  const double ds = std::max(seed.speed_step / 6, 1e-4);
  t = std::exp(grid_max([&](double lt) { return env.score(centre, std::exp(lt)); }, std::log(t), ds, 4).first);
  centre = grid_max([&](double c) { return env.score(c, t); }, centre, hop / 4, 4).first;
  double offset = centre - env.centre_tau() / t;
  // Early exits, before the costly steps: what the envelopes say is out
  // of range or does not match.
  if (t < 1 / (1 + max_deviation) - 1e-3 || t > 1 + max_deviation + 1e-3) return std::nullopt;
  if (env.score(centre, t) < kMinEnvelopeScore) return std::nullopt;

  // Step 2: 32 ms segments of the master at its own pitch; the second pass
  // searches only around the first pass's line.
  const size_t seg = frame_len(rate_hz);
  const double tol = kTempoJitterS * rate_hz;
  const double radii_s[] = {0.04, kTempoJitterS + 0.004};
  size_t used = 0;
  int polarity = 1;
  for (double radius_s : radii_s) {
    const size_t radius = static_cast<size_t>(radius_s * rate_hz);
    const auto hits = land_tempo_segments(plans, master, span, offset, t, seg, radius);
    const auto line = fit_line(hits, 0.3, tol, 0.2 * static_cast<double>(master.size()), 48);
    if (!line) return std::nullopt;
    // Master sample tau lands at offset + tau / t + a + b (tau - centre).
    offset += line->a - line->b * line->centre;
    t = 1.0 / (1.0 / t + line->b);
    used = line->used;
    polarity = line->polarity;
    if (static_cast<double>(used) < kMinAgreeing * static_cast<double>(hits.size())) return std::nullopt;

  }
  // The spectrum did not move: with the band edges in place the envelopes
  // match at least as well as with them shifted by the tempo (a speed
  // change the speed fit missed matches better shifted).
  {
    EnvelopeSearch shifted(plans, master, span, rate_hz, bands, true);
    const double c = offset + env.centre_tau() / t;
    if (shifted.score(c, t) > env.score(c, t)) return std::nullopt;
  }
  // Step 3: the aligned master against the airing, and the null alignment.
  const auto first = static_cast<int64_t>(std::llround(offset));
  if (first < 0 || first >= static_cast<int64_t>(span.size())) return std::nullopt;
  const size_t air_len = std::min(span.size() - static_cast<size_t>(first),
                                  static_cast<size_t>(static_cast<double>(master.size()) / t));
  const Samples airing(span.begin() + first, span.begin() + first + static_cast<std::ptrdiff_t>(air_len));
  if (airing.size() < 4096) return std::nullopt;
  const Samples a = aligned(plans, master, airing, rate_hz, t, kTempoJitterS, polarity);
  const Samples reversed(master.rbegin(), master.rend());
  const Samples a0 = aligned(plans, reversed, airing, rate_hz, t, kTempoJitterS, polarity);
  const double r = polarity * pearson(a.data(), airing.data(), airing.size(), 1e-12);
  const double r0 = std::max(0.0, polarity * pearson(a0.data(), airing.data(), airing.size(), 1e-12));
  TempoFit fit;
  fit.tempo = t;
  fit.offset = offset;
  fit.polarity = polarity;
  fit.raw_score = polarity * r;
  fit.null_score = polarity * r0;
  fit.score = polarity * (r - r0) / (1 - r0);
  fit.segments = used;
  return fit;
}

}  // namespace godwit::detail
