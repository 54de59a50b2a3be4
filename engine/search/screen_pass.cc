#include "screen_pass.h"

#include <algorithm>
#include <cmath>

#include "core/thread_pool.h"
#include "core/wall_timer.h"
#include "fft_plans.h"
#include "godwit/audio/resampler.h"
#include "window_energy.h"

namespace godwit::detail {
namespace {

// Segments of the exact picker one span may hold besides its two flanks;
// candidates farther apart are scored in spans of their own.
constexpr int64_t kMaxCoreSegments = 4;

// Segments [s0, s1] of the exact trace that template t must be judged in.
struct Want {
  int64_t s0 = 0, s1 = 0;
  size_t t = 0;
};

struct Span {
  int64_t s0 = 0, s1 = 0;       // core segments
  std::vector<size_t> masters;  // sorted, unique
};

// One span's samples transformed at one FFT size (that of a group of the
// exact bank).
struct SpanBlock {
  size_t span = 0, group = 0;
  RealBuffer block;
  ComplexBuffer spectrum;
  WindowEnergy energy;
  double block_energy = 0;
  int64_t first = 0;  // trace index of the block's first sample
};

struct Scratch {
  ComplexBuffer product;
  RealBuffer output;
};

}  // namespace

size_t exact_span_samples(const PickerOptions& picker) {
  const size_t seg = std::max<size_t>(1, picker.segment_samples);
  return (2 * picker.span_segments + kMaxCoreSegments + 1) * seg;
}

size_t exact_fft_size_for(size_t len_samples, const PickerOptions& picker) {
  const size_t need = len_samples + exact_span_samples(picker);
  size_t l = 1;
  while (l < need) l <<= 1;
  return l;
}

struct ScreenPass::Impl {
  std::shared_ptr<const TemplateBank> exact, screen;
  double ratio;  // analysis samples per screen sample
  ScreenOptions opt;
  PickerOptions picker, screen_picker;
  CorrelatorOptions copt;
  Resampler decimator;
  Correlator screen_corr;
  std::vector<PeakPicker> screen_pickers;
  std::vector<int64_t> screen_fed;  // per master: screen trace fed so far
  ScreenStats stats;
  ScoreSink sink;  // screen scores into the screen's pickers
  int64_t seg, span, tol, screen_radius;
  size_t longest = 0;

  Samples hist;  // analysis stream from hist_start on
  int64_t hist_start = 0;
  int64_t pushed = 0;
  Samples decimated;
  std::vector<Want> wants;
  std::vector<std::vector<Candidate>> found;

  ThreadPool pool;
  FftPlans plans;
  std::vector<const FftPlan*> group_plans;  // per group of the exact bank
  std::vector<Scratch> scratch;

  Impl(std::shared_ptr<const TemplateBank> e, std::shared_ptr<const TemplateBank> s, double analysis_rate_hz,
       const ScreenOptions& o, const PickerOptions& p, const CorrelatorOptions& c)
      : exact(std::move(e)),
        screen(std::move(s)),
        ratio(analysis_rate_hz / o.rate_hz),
        opt(o),
        picker(p),
        copt(c),
        decimator(analysis_rate_hz, o.rate_hz),
        screen_corr(screen, c),
        pool(c.threads),
        plans(c.planner) {
    seg = static_cast<int64_t>(std::max<size_t>(1, picker.segment_samples));
    span = static_cast<int64_t>(picker.span_segments);
    // The screen's peak lies within a few of its samples of the exact one.
    tol = static_cast<int64_t>(std::ceil(3 * ratio)) + 2;
    screen_picker = picker;
    screen_picker.threshold = opt.threshold;
    screen_picker.floor_k = opt.floor_k;
    screen_picker.segment_samples = std::max<size_t>(16, static_cast<size_t>(std::lround(static_cast<double>(seg) / ratio)));
    screen_radius = static_cast<int64_t>(screen_picker.segment_samples);
    for (const auto& t : exact->templates()) longest = std::max(longest, t.len_samples);
    size_t largest = 0;
    for (const auto& g : exact->groups()) {
      group_plans.push_back(&plans.get(g.fft_size));  // planned here, not on the workers
      largest = std::max(largest, g.fft_size);
    }
    for (size_t w = 0; w < pool.workers(); ++w)
      scratch.push_back({alloc_complex(largest / 2 + 1), alloc_real(largest)});
    sink = [this](size_t t, int64_t first, const float* v, size_t n) {
      screen_pickers[t].feed(first, v, n);
      screen_fed[t] = first + static_cast<int64_t>(n);
    };
    reset();
  }

  void reset() {
    hist.clear();
    hist_start = 0;
    pushed = 0;
    decimator.reset();
    screen_corr.reset();
    screen_pickers.clear();
    for (size_t t = 0; t < screen->size(); ++t)
      screen_pickers.emplace_back(static_cast<size_t>(screen_radius), screen_picker);
    screen_fed.assign(screen->size(), 0);
    wants.clear();
    found.assign(exact->size(), {});
  }

  void screen_push(const Samples& x) {
    if (x.empty()) return;
    WallTimer timed(stats.screen_s);
    screen_corr.push(x.data(), x.size(), sink);
  }

  void collect() {
    for (size_t t = 0; t < screen_pickers.size(); ++t) {
      for (const auto& c : screen_pickers[t].take()) {
        ++stats.screen_candidates;
        const double centre = c.offset * ratio;
        const auto lo = static_cast<int64_t>(std::floor(centre)) - tol;
        const auto hi = static_cast<int64_t>(std::ceil(centre)) + tol;
        wants.push_back({std::max<int64_t>(0, lo) / seg, std::max<int64_t>(0, hi) / seg, t});
      }
    }
  }

  // Trace indices [a, b) of a span's exact scores.
  int64_t span_first(const Span& s) const { return std::max<int64_t>(0, (s.s0 - span) * seg); }
  int64_t span_end(const Span& s) const { return (s.s1 + span + 1) * seg; }

  void score_ready(bool final) {
    std::sort(wants.begin(), wants.end(), [](const Want& a, const Want& b) { return a.s0 < b.s0; });
    std::vector<Span> spans;
    std::vector<Want> later;
    for (const auto& w : wants) {
      if (!spans.empty() && w.s0 <= spans.back().s1 + 1 &&
          std::max(spans.back().s1, w.s1) - spans.back().s0 < kMaxCoreSegments) {
        spans.back().s1 = std::max(spans.back().s1, w.s1);
        spans.back().masters.push_back(w.t);
      } else {
        spans.push_back({w.s0, w.s1, {w.t}});
      }
    }
    std::vector<Span> ready;
    for (auto& s : spans) {
      std::sort(s.masters.begin(), s.masters.end());
      s.masters.erase(std::unique(s.masters.begin(), s.masters.end()), s.masters.end());
      if (final || pushed >= span_end(s) + static_cast<int64_t>(longest)) {
        ready.push_back(std::move(s));
      } else {
        for (size_t t : s.masters) later.push_back({s.s0, s.s1, t});
      }
    }
    wants = std::move(later);
    // A few spans at a time: each holds a block, its spectrum and its sums.
    const size_t batch = std::max<size_t>(2, pool.workers() * 2);
    for (size_t i = 0; i < ready.size(); i += batch)
      score_spans(std::vector<Span>(ready.begin() + static_cast<long>(i),
                                    ready.begin() + static_cast<long>(std::min(ready.size(), i + batch))),
                  final);
  }

  void score_spans(const std::vector<Span>& spans, bool final) {
    WallTimer timed(stats.spans_s);
    // A block per (span, FFT size of its masters), then a product and an
    // inverse transform per (span, master).
    std::vector<SpanBlock> blocks;
    std::vector<std::pair<size_t, size_t>> jobs;  // (block, master)
    for (size_t i = 0; i < spans.size(); ++i) {
      const size_t first_block = blocks.size();
      for (size_t t : spans[i].masters) {
        const size_t g = exact->at(t).group;
        size_t k = first_block;
        while (k < blocks.size() && blocks[k].group != g) ++k;
        if (k == blocks.size()) {
          blocks.emplace_back();
          blocks.back().span = i;
          blocks.back().group = g;
        }
        jobs.emplace_back(k, t);
      }
    }
    pool.run(blocks.size(), [&](size_t k, size_t) {
      SpanBlock& b = blocks[k];
      const size_t L = exact->groups()[b.group].fft_size;
      // Never earlier than what is kept (trim() keeps what open spans need).
      b.first = std::max(span_first(spans[b.span]), hist_start);
      b.block = alloc_real(L);
      b.spectrum = alloc_complex(L / 2 + 1);
      const auto n_real = static_cast<size_t>(std::clamp<int64_t>(pushed - b.first, 0, static_cast<int64_t>(L)));
      std::copy_n(hist.data() + (b.first - hist_start), n_real, b.block.get());
      b.block_energy = b.energy.assign(b.block.get(), n_real, L);
      fftwf_execute_dft_r2c(group_plans[b.group]->forward, b.block.get(), as_fftw(b.spectrum.get()));
    });
    std::vector<std::vector<Candidate>> kept(jobs.size());
    const double floor2 = copt.floor_rms * copt.floor_rms;
    pool.run(jobs.size(), [&](size_t j, size_t worker) {
      const auto [bi, t] = jobs[j];
      const SpanBlock& b = blocks[bi];
      const size_t i = b.span;
      const auto& group = exact->groups()[b.group];
      const size_t L = group.fft_size;
      const float inv_l = 1.0f / static_cast<float>(L);
      const size_t m = exact->at(t).len_samples;
      int64_t n_out = std::min<int64_t>(span_end(spans[i]), static_cast<int64_t>(L - group.max_len_samples + 1) + b.first) - b.first;
      if (final) n_out = std::min<int64_t>(n_out, pushed - static_cast<int64_t>(m) - b.first + 1);
      if (n_out <= 0) return;
      Scratch& ws = scratch[worker];
      if (const std::complex<float>* tc = exact->conj_spectrum(t)) {
        multiply_spectra(b.spectrum.get(), tc, ws.product.get(), L / 2 + 1);
      } else {
        // Spectra on demand (template_bank.h): the master's transform, as
        // the bank would have kept it, made here for this pair.
        const Samples& norm = exact->normalized(t);
        std::copy(norm.begin(), norm.end(), ws.output.get());
        std::fill(ws.output.get() + norm.size(), ws.output.get() + L, 0.0f);
        fftwf_execute_dft_r2c(group_plans[b.group]->forward, ws.output.get(), as_fftw(ws.product.get()));
        const std::complex<float>* a = b.spectrum.get();
        std::complex<float>* p = ws.product.get();
        for (size_t k = 0; k < L / 2 + 1; ++k) p[k] = a[k] * std::conj(p[k]);
      }
      fftwf_execute_dft_c2r(group_plans[b.group]->inverse, as_fftw(ws.product.get()), ws.output.get());
      const double e_min = std::max(floor2 * static_cast<double>(m),
                                    copt.rounding_guard * copt.rounding_guard * b.block_energy);
      float* r = ws.output.get();
      for (size_t k = 0; k < static_cast<size_t>(n_out); ++k) {
        const double e = b.energy.energy(k, m);
        const float inv = e > e_min ? static_cast<float>(1.0 / std::sqrt(e)) : 0.0f;
        r[k] = std::clamp(r[k] * inv_l * inv, -1.0f, 1.0f);
      }
      PeakPicker p(m, picker);
      p.feed(b.first, r, static_cast<size_t>(n_out));
      p.finish();
      const int64_t core_from = spans[i].s0 * seg, core_to = (spans[i].s1 + 1) * seg;
      for (const auto& c : p.take())
        if (c.index >= core_from && c.index < core_to) kept[j].push_back(c);
    });
    stats.spans += spans.size();
    stats.span_templates += jobs.size();
    for (size_t j = 0; j < jobs.size(); ++j)
      for (const auto& c : kept[j]) found[jobs[j].second].push_back(c);
  }

  // Forgets the stream no open or future span needs.
  void trim() {
    int64_t fed = screen_fed.empty() ? 0 : *std::min_element(screen_fed.begin(), screen_fed.end());
    if (fed <= 0) return;
    const int64_t settled_s = fed - (span + 2) * static_cast<int64_t>(screen_picker.segment_samples) - screen_radius - 1;
    int64_t keep = static_cast<int64_t>(std::floor(static_cast<double>(settled_s) * ratio)) - tol;
    keep = (keep / seg - span - 1) * seg;
    for (const auto& w : wants) keep = std::min(keep, (w.s0 - span - 1) * seg);
    keep = std::min(keep, pushed);
    if (keep - hist_start < (int64_t{1} << 20)) return;
    hist.erase(hist.begin(), hist.begin() + (keep - hist_start));
    hist_start = keep;
  }

  // One candidate per airing, as the full search's picker keeps them.
  void settle(size_t t) {
    auto& v = found[t];
    std::sort(v.begin(), v.end(), [](const Candidate& a, const Candidate& b) { return a.index < b.index; });
    const auto radius = static_cast<int64_t>(std::max<size_t>(1, exact->at(t).len_samples));
    std::vector<Candidate> out;
    for (const auto& c : v) {
      if (!out.empty() && c.index - out.back().index < radius) {
        if (std::fabs(c.score) > std::fabs(out.back().score)) out.back() = c;
        continue;
      }
      out.push_back(c);
    }
    v = std::move(out);
  }
};

ScreenPass::ScreenPass(std::shared_ptr<const TemplateBank> exact, std::shared_ptr<const TemplateBank> screen,
                       double analysis_rate_hz, const ScreenOptions& options, const PickerOptions& picker,
                       const CorrelatorOptions& correlator)
    : impl_(std::make_unique<Impl>(std::move(exact), std::move(screen), analysis_rate_hz, options, picker,
                                   correlator)) {}

ScreenPass::~ScreenPass() = default;

void ScreenPass::push(const float* x, size_t n) {
  Impl& s = *impl_;
  s.hist.insert(s.hist.end(), x, x + n);
  s.pushed += static_cast<int64_t>(n);
  s.decimated.clear();
  {
    WallTimer timed(s.stats.decimate_s);
    s.decimator.process(x, n, s.decimated);
  }
  s.screen_push(s.decimated);
  s.collect();
  s.score_ready(false);
  s.trim();
}

void ScreenPass::finish() {
  Impl& s = *impl_;
  s.decimated.clear();
  s.decimator.flush(s.decimated);
  s.screen_push(s.decimated);
  s.screen_corr.finish(s.sink);
  for (auto& p : s.screen_pickers) p.finish();
  s.collect();
  s.score_ready(true);
  for (size_t t = 0; t < s.found.size(); ++t) s.settle(t);
}

std::vector<Candidate> ScreenPass::take(size_t t) { return std::move(impl_->found[t]); }

void ScreenPass::reset() { impl_->reset(); }

const ScreenStats& ScreenPass::stats() const { return impl_->stats; }

}  // namespace godwit::detail
