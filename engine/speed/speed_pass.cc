#include "speed_pass.h"

#include <algorithm>
#include <cmath>

namespace godwit::detail {
namespace {

// Ends of a master may drift this many envelope frames before the coarse
// grid offers a closer speed: spacing = 4 * drift / length (relative).
constexpr double kDriftFrames = 0.75;
constexpr double kTempoReach = 0.005;

}  // namespace

WarpLayout warp_layout(double rate_hz) {
  WarpLayout l;
  l.window = 256;
  while (static_cast<double>(l.window) < 0.12 * rate_hz) l.window *= 2;  // 128 ms at 8 kHz
  l.frame_hop = std::max<size_t>(1, static_cast<size_t>(std::lround(0.025 * rate_hz)));
  l.hop = 2 * l.frame_hop;  // 20 frames per second
  return l;
}

SpeedPass::SpeedPass(std::vector<WarpTemplate> envelopes, double rate_hz, const SpeedOptions& o, int threads)
    : rate_hz_(rate_hz), options_(o) {
  const WarpLayout layout = warp_layout(rate_hz);
  const double frame_s = static_cast<double>(layout.hop) / rate_hz;
  const size_t masters = envelopes.size();
  for (size_t t = 0; t < masters; ++t) master_.push_back(t);
  if (o.head_fraction > 0 && o.head_fraction < 1) {
    for (size_t t = 0; t < masters; ++t) {
      const size_t frames = envelopes[t].frames;
      if (static_cast<double>(frames) * frame_s < o.head_min_s) continue;
      const size_t head = static_cast<size_t>(std::floor(o.head_fraction * static_cast<double>(frames)));
      if (head < 8 || head >= frames) continue;
      const size_t bands = envelopes[t].envelope.size() / std::max<size_t>(1, frames);
      WarpTemplate h;
      h.frames = head;
      h.envelope.assign(envelopes[t].envelope.begin(),
                        envelopes[t].envelope.begin() + static_cast<std::ptrdiff_t>(head * bands));
      envelopes.push_back(std::move(h));
      master_.push_back(t);
    }
  }
  const double drift_s = kDriftFrames * static_cast<double>(layout.hop) / rate_hz;
  size_t longest = 1;
  for (const auto& e : envelopes) longest = std::max(longest, e.frames);
  const double step = 4 * drift_s / (static_cast<double>(longest) * frame_s);
  // The tempo fit's sweep reaches kTempoReach past the grid's end
  // (tempo_refiner.cc), so the grid needs to span only this much less for
  // it: with the defaults (4.5 % and 5 %) the grid is the speed search's
  // own (a grid to 5 % moved its points and lost a cut airing at 0.98 in
  // tests/e2e/speed_test.py).
  const double range = std::log1p(std::max({0.0, o.max_deviation, o.max_tempo_deviation - kTempoReach}));
  const int g_max = std::max(1, static_cast<int>(std::ceil(range / step)));
  for (int g = -g_max; g <= g_max; ++g) speeds_.push_back(std::exp(range * g / g_max));
  const double grid = range / g_max;
  for (auto& e : envelopes) {
    const double own = 4 * drift_s / (static_cast<double>(std::max<size_t>(1, e.frames)) * frame_s);
    const int stride = std::max(1, static_cast<int>(std::floor(own / grid)));
    e.streams.clear();
    for (int g = -g_max; g <= g_max; ++g)
      if (g % stride == 0 || g == -g_max || g == g_max) e.streams.push_back(static_cast<size_t>(g + g_max));
    step_.push_back(grid * stride);
    frames_.push_back(e.frames);
    streams_.push_back(e.streams);
  }
  picker_options_.threshold = o.coarse_threshold;
  picker_options_.floor_k = o.coarse_floor_k;
  picker_options_.segment_samples = 16;  // 0.8 s of frames
  picker_options_.span_segments = 8;
  WarpOptions wo;
  wo.rate_hz = rate_hz;
  wo.window = layout.window;
  wo.frame_hop = layout.frame_hop;
  wo.hop = layout.hop;
  wo.speeds = speeds_;
  wo.threads = threads;
  correlator_ = std::make_unique<WarpCorrelator>(std::move(envelopes), wo);
  sink_ = [this](size_t t, size_t g, int64_t first, const float* s, size_t n) {
    const auto& st = streams_[t];
    const size_t local = static_cast<size_t>(std::lower_bound(st.begin(), st.end(), g) - st.begin());
    pickers_[t][local].feed(first, s, n);
  };
  reset();
}

SpeedPass::~SpeedPass() = default;

void SpeedPass::reset() {
  correlator_->reset();
  pickers_.clear();
  for (size_t t = 0; t < streams_.size(); ++t) {
    pickers_.emplace_back();
    for (size_t i = 0; i < streams_[t].size(); ++i) pickers_[t].emplace_back(frames_[t], picker_options_);
  }
}

void SpeedPass::push(const float* x, size_t n) { correlator_->push(x, n, sink_); }

void SpeedPass::finish() {
  correlator_->finish(sink_);
  for (auto& per : pickers_)
    for (auto& p : per) p.finish();
}

std::vector<SpeedCandidate> SpeedPass::candidates(const std::vector<std::pair<size_t, double>>& plain,
                                                  double duration_s) {
  const WarpLayout layout = warp_layout(rate_hz_);
  const size_t cap = static_cast<size_t>(std::ceil(std::max(1.0, options_.max_candidates_per_hour * duration_s / 3600)));
  std::vector<SpeedCandidate> out;
  // A master's candidates from its whole envelope and its head together.
  const size_t masters = master_.empty() ? 0 : *std::max_element(master_.begin(), master_.end()) + 1;
  std::vector<std::vector<SpeedCandidate>> all(masters);
  for (size_t t = 0; t < pickers_.size(); ++t) {
    for (size_t i = 0; i < pickers_[t].size(); ++i) {
      const size_t g = streams_[t][i];
      for (const auto& c : pickers_[t][i].take()) {
        if (c.score <= 0) continue;  // envelopes: only a positive match means anything
        SpeedCandidate sc;
        sc.template_index = master_[t];
        sc.offset = correlator_->offset_of(g, c.offset);
        sc.score = c.score;
        sc.speed = speeds_[g];
        sc.speed_step = step_[t];  // the grid of the envelope that found it
        all[master_[t]].push_back(sc);
      }
    }
  }
  for (size_t m = 0; m < masters; ++m) {
    auto& mine = all[m];
    std::sort(mine.begin(), mine.end(), [](const auto& a, const auto& b) { return a.score > b.score; });
    const double half = 0.5 * static_cast<double>(frames_[m] * layout.hop);
    std::vector<SpeedCandidate> kept;
    for (const auto& c : mine) {
      if (kept.size() >= cap) break;
      bool near = false;
      for (const auto& [pt, off] : plain)
        if (pt == m && std::fabs(off - c.offset) < half) near = true;
      for (const auto& k : kept)
        if (std::fabs(k.offset - c.offset) < half) near = true;
      if (!near) kept.push_back(c);
    }
    out.insert(out.end(), kept.begin(), kept.end());
  }
  return out;
}

}  // namespace godwit::detail
