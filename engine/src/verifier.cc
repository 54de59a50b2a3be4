#include "godwit/verifier.h"

#include "pearson.h"

#include <algorithm>
#include <cmath>

namespace godwit {
namespace {

// -70 dBFS RMS on both spans: silence gives no evidence either way.
constexpr double kSilentEnergy = 1e-7;

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
  // Coverage and missing ranges at a finer grain (a quarter of a segment),
  // so that a cut inside a second is placed to about 0.25 s, with the same
  // threshold.
  const size_t fine = std::max<size_t>(16, seg / 4);
  double aired_frames = 0;
  for (size_t a = 0; a < master.size(); a += fine) {
    const size_t b = std::min(master.size(), a + fine);
    double r = 0;
    if (b <= airing.size() && b - a >= 16) r = polarity * detail::pearson(master.data() + a, airing.data() + a, b - a, kSilentEnergy);
    if (r >= thr) {
      aired_frames += static_cast<double>(b - a);
      continue;
    }
    const double from = static_cast<double>(a) / rate_hz, to = static_cast<double>(b) / rate_hz;
    if (!p.missing_s.empty() && std::fabs(p.missing_s.back().second - from) < 1e-9)
      p.missing_s.back().second = to;
    else
      p.missing_s.emplace_back(from, to);
  }
  // Isolated short dips (a quarter second of near-silence in the master)
  // are not missing audio: keep only gaps of at least one segment, or
  // those that reach the end.
  std::vector<std::pair<double, double>> kept;
  const double master_s = static_cast<double>(master.size()) / rate_hz;
  for (const auto& [from, to] : p.missing_s) {
    if (to - from >= o.segment_s - 1e-9 || to >= master_s - 1e-9 || from <= 1e-9) kept.push_back({from, to});
    else aired_frames += (to - from) * rate_hz;
  }
  p.missing_s = std::move(kept);
  p.coverage = master.empty() ? 0.0 : aired_frames / static_cast<double>(master.size());
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
