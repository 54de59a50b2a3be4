#include "godwit/compliance/verifier.h"

#include "search/pearson.h"

#include <algorithm>
#include <cmath>

namespace godwit {
namespace {

// -70 dBFS RMS on both spans: silence gives no evidence either way.
constexpr double kSilentEnergy = 1e-7;
// A frame whose master energy is this far under the median frame's is
// quiet: its score says little either way (15 dB; ours).
constexpr double kQuietBelow = 0.0316;
// Crossfades (segues) at a spot's edges last up to about two seconds
// (common practice in playout; from memory). Inside one the spot's level
// ramps down under the next item, so its frames still score above the
// null level, if far under the airing's own: a frame counts as faded when
// it scores at least 1/16 of mu and at least 0.05, about 1.5 standard
// deviations of a quarter-second frame's null score at 8 kHz (ours; a
// spot aired 12 dB under the programme it fades into scores under mu/8
// for the last third of the fade). In the last half second of a fade,
// where the spot's weight ends near zero, its frames score about zero, as
// they do after a cut: nothing there tells a fade from a cut, so an aired
// part that ends within half a second of the master's edge (and the
// recording holds the rest) is taken to reach the edge; godwit does not
// claim a cut it cannot show.
constexpr double kEdgeS = 0.5;
constexpr double kCrossfadeS = 2.0;
constexpr double kCrossfadeLevel = 1.0 / 16;  // of mu
constexpr double kCrossfadeFloor = 0.05;

double energy_per_sample(const float* x, size_t n) {
  double s = 0, e = 0;
  for (size_t i = 0; i < n; ++i) s += x[i];
  const double m = s / static_cast<double>(n);
  for (size_t i = 0; i < n; ++i) e += (x[i] - m) * (x[i] - m);
  return e / static_cast<double>(n);
}

double median(std::vector<double> v) {
  if (v.empty()) return 0;
  const auto mid = v.begin() + static_cast<std::ptrdiff_t>(v.size() / 2);
  std::nth_element(v.begin(), mid, v.end());
  return *mid;
}

// The interval [from, to) of frames with the largest sum of w (Kadane);
// empty (from == to) when every w is negative.
std::pair<size_t, size_t> best_interval(const std::vector<double>& w) {
  double best = 0, run = 0;
  size_t from = 0, to = 0, start = 0;
  for (size_t k = 0; k < w.size(); ++k) {
    if (run <= 0) run = 0, start = k;
    run += w[k];
    if (run > best) best = run, from = start, to = k + 1;
  }
  return {from, to};
}

}  // namespace

Profile verify_airing(const Samples& master, const Samples& airing, double rate_hz, int polarity,
                      const VerifyOptions& o) {
  Profile p;
  p.segment_s = o.segment_s;
  const size_t seg = std::max<size_t>(16, static_cast<size_t>(o.segment_s * rate_hz));
  const size_t n_seg = (master.size() + seg - 1) / seg;
  for (size_t s = 0; s < n_seg; ++s) {
    const size_t a = s * seg, b = std::min(master.size(), a + seg);
    double r = 0;
    if (b <= airing.size() && b - a >= 16) r = polarity * detail::pearson(master.data() + a, airing.data() + a, b - a, kSilentEnergy);
    p.scores.push_back(static_cast<float>(r));
  }
  std::vector<float> sorted = p.scores;
  std::sort(sorted.begin(), sorted.end());
  const float p90 = sorted.empty() ? 0.0f : sorted[std::min(sorted.size() - 1, sorted.size() * 9 / 10)];
  const double thr = std::max(o.min_segment_score, o.relative * p90);
  for (size_t s = 0; s < n_seg; ++s) p.aired.push_back(p.scores[s] >= thr);
  if (master.empty()) return p;

  // Coverage: frames of a quarter segment.
  const size_t fine = std::max<size_t>(16, seg / 4);
  const size_t n = (master.size() + fine - 1) / fine;
  const double frame_s = static_cast<double>(fine) / rate_hz;
  const double master_s = static_cast<double>(master.size()) / rate_hz;
  std::vector<double> score(n, 0), energy(n, 0);
  std::vector<bool> held(n, false);  // the recording holds the whole frame
  for (size_t k = 0; k < n; ++k) {
    const size_t a = k * fine, b = std::min(master.size(), a + fine);
    if (b - a < 16) continue;
    energy[k] = energy_per_sample(master.data() + a, b - a);
    held[k] = b <= airing.size();
    if (held[k]) score[k] = polarity * detail::pearson(master.data() + a, airing.data() + a, b - a, kSilentEnergy);
  }
  std::vector<double> audible_energy;
  for (size_t k = 0; k < n; ++k)
    if (energy[k] > kSilentEnergy) audible_energy.push_back(energy[k]);
  const double quiet = kQuietBelow * median(audible_energy);
  std::vector<bool> loud(n);
  for (size_t k = 0; k < n; ++k) loud[k] = energy[k] > kSilentEnergy && energy[k] >= quiet;

  // The level each frame would score if it aired: mu * shape[k]. In noise
  // of power N a frame of the master's power E scores about
  // sqrt(E / (E + N)) of what it scores without (the correlation of a
  // signal with itself plus independent noise), so at a low SNR a quieter
  // stretch (a soft ending) scores under the airing's level though it
  // aired. N is fitted to the aired part (fit_shape); shape is 1 (a level
  // alike for every loud frame) until then, and where noise is slight.
  std::vector<double> shape(n, 1.0);
  // Weights, the log-likelihood ratio of "aired at level m = mu * shape"
  // against the null level 0 for Gaussian scores of equal spread, in units
  // of mu / sigma^2: (m / mu) (s - m / 2). Loud frames the recording
  // holds; quiet frames weigh nothing; frames it does not hold weigh as a
  // score of 0 (nothing of them aired on the record).
  auto weights = [&](double mu) {
    std::vector<double> w(n, 0);
    for (size_t k = 0; k < n; ++k) {
      const double m = mu * shape[k];
      w[k] = !held[k] ? -m * m / (2 * mu) : loud[k] ? m / mu * (score[k] - m / 2) : 0;
    }
    return w;
  };
  std::vector<double> loud_scores;
  for (size_t k = 0; k < n; ++k)
    if (loud[k] && held[k]) loud_scores.push_back(score[k]);
  std::sort(loud_scores.begin(), loud_scores.end());
  double mu = loud_scores.empty() ? 0 : loud_scores[loud_scores.size() * 3 / 4];  // the upper quartile first
  std::pair<size_t, size_t> iv{0, 0};
  // Fits the noise power N over the aired part [from, to): among N from 0
  // to 16 times the median frame's power, the one whose shape explains the
  // loud frames' scores best (least squares, the level q fitted with it);
  // sets shape and returns q (0 when no frame can tell).
  auto fit_shape = [&](size_t from, size_t to) {
    double best_sse = -1, best_q = 0, best_n = 0;
    const double e_med = median(audible_energy);
    for (double c : {0.0, 1.0 / 64, 1.0 / 32, 1.0 / 16, 1.0 / 8, 0.25, 0.5, 1.0, 2.0, 4.0, 8.0, 16.0}) {
      const double noise = c * e_med;
      double sf = 0, ff = 0, ss = 0;
      for (size_t k = from; k < to; ++k) {
        if (!loud[k] || !held[k]) continue;
        const double f = std::sqrt(energy[k] / (energy[k] + noise));
        sf += score[k] * f, ff += f * f, ss += score[k] * score[k];
      }
      if (ff <= 0) return 0.0;
      const double q = sf / ff, sse = ss - q * sf;
      if (best_sse < 0 || sse < best_sse - 1e-12) best_sse = sse, best_q = q, best_n = noise;
    }
    // Normalized to the loud frames' median, so that mu keeps its meaning
    // (the aired part's typical score).
    std::vector<double> f_loud;
    for (size_t k = 0; k < n; ++k) {
      shape[k] = energy[k] > 0 ? std::sqrt(energy[k] / (energy[k] + best_n)) : 0.0;
      if (k >= from && k < to && loud[k] && held[k]) f_loud.push_back(shape[k]);
    }
    const double f_med = median(f_loud);
    if (f_med <= 0) {
      std::fill(shape.begin(), shape.end(), 1.0);
      return 0.0;
    }
    for (double& f : shape) f /= f_med;
    return best_q * f_med;
  };
  for (int pass = 0; pass < 2 && mu > 0; ++pass) {
    iv = best_interval(weights(mu));
    std::vector<double> inside;
    for (size_t k = iv.first; k < iv.second; ++k)
      if (loud[k] && held[k]) inside.push_back(score[k]);
    if (inside.empty()) break;
    mu = median(inside);
  }
  // The level frame by frame, fitted to the aired part found so far; the
  // aired part again with it.
  if (mu > 0 && iv.first < iv.second && fit_shape(iv.first, iv.second) > 0) {
    iv = best_interval(weights(mu));
    std::vector<double> inside;
    for (size_t k = iv.first; k < iv.second; ++k)
      if (loud[k] && held[k]) inside.push_back(score[k]);
    if (!inside.empty()) mu = median(inside);
  }
  if (mu <= 0 || iv.first == iv.second) {  // nothing aired that the frames can tell
    p.coverage = 0;
    p.missing_s = {{0.0, master_s}};
    p.coverage_range = {0, 0};
    return p;
  }
  iv = best_interval(weights(mu));
  p.aired_level = mu;
  // Widen over quiet frames, and over a crossfade, at each edge.
  const size_t fade = static_cast<size_t>(std::ceil(kCrossfadeS / frame_s));
  auto widen = [&](size_t k) {
    return held[k] && (!loud[k] || score[k] >= std::max(kCrossfadeFloor, mu * shape[k] * kCrossfadeLevel));
  };
  for (size_t f = 0; iv.first > 0 && widen(iv.first - 1) && (!loud[iv.first - 1] || f < fade); ++f) --iv.first;
  for (size_t f = 0; iv.second < n && widen(iv.second) && (!loud[iv.second] || f < fade); ++f) ++iv.second;
  const size_t edge = static_cast<size_t>(std::floor(kEdgeS / frame_s + 1e-9));
  auto held_all = [&](size_t from, size_t to) {
    for (size_t k = from; k < to; ++k)
      if (!held[k]) return false;
    return true;
  };
  if (iv.first <= edge && held_all(0, iv.first)) iv.first = 0;
  if (n - iv.second <= edge && held_all(iv.second, n)) iv.second = n;

  // Support ranges of the edges: log-likelihood within 2 of the best, with
  // the spread of the aired frames' scores (robust, at least 0.02).
  std::vector<double> dev;
  for (size_t k = iv.first; k < iv.second; ++k)
    if (loud[k] && held[k]) dev.push_back(std::fabs(score[k] - mu * shape[k]));
  const double sigma = std::max(0.02, 1.4826 * median(dev));
  const double scale = mu / (sigma * sigma);
  const std::vector<double> w = weights(mu);
  size_t from_lo = iv.first, from_hi = iv.first, to_lo = iv.second, to_hi = iv.second;
  for (double drop = 0; from_lo > 0;) {  // moving the start earlier adds frames
    drop -= w[from_lo - 1] * scale;
    if (drop > 2) break;
    --from_lo;
  }
  for (double drop = 0; from_hi + 1 < iv.second;) {  // later removes them
    drop += w[from_hi] * scale;
    if (drop > 2) break;
    ++from_hi;
  }
  for (double drop = 0; to_hi < n;) {
    drop -= w[to_hi] * scale;
    if (drop > 2) break;
    ++to_hi;
  }
  for (double drop = 0; to_lo > from_hi + 1;) {
    drop += w[to_lo - 1] * scale;
    if (drop > 2) break;
    --to_lo;
  }
  auto at = [&](size_t k) { return std::min(master_s, static_cast<double>(k) * frame_s); };
  p.aired_from_s = at(iv.first);
  p.aired_to_s = at(iv.second);
  p.aired_from_range_s = {at(from_lo), at(from_hi)};
  p.aired_to_range_s = {at(to_lo), at(to_hi)};
  p.coverage = (p.aired_to_s - p.aired_from_s) / master_s;
  p.coverage_range = {std::max(0.0, at(to_lo) - at(from_hi)) / master_s, (at(to_hi) - at(from_lo)) / master_s};
  if (p.aired_from_s > 0) p.missing_s.emplace_back(0.0, p.aired_from_s);
  if (p.aired_to_s < master_s) p.missing_s.emplace_back(p.aired_to_s, master_s);
  return p;
}

double mean_over(const Profile& profile, const std::vector<bool>& which) {
  double sum = 0;
  size_t n = 0;
  for (size_t i = 0; i < profile.scores.size(); ++i) {
    if (!which.empty() && (i >= which.size() || !which[i])) continue;
    sum += profile.scores[i];
    ++n;
  }
  if (n == 0) return which.empty() ? 0.0 : mean_over(profile, {});
  return sum / static_cast<double>(n);
}

}  // namespace godwit
