#include "godwit/search/correlator.h"

#include <algorithm>
#include <cmath>

#include "fft_plans.h"
#include "core/thread_pool.h"
#include "window_energy.h"

namespace godwit {
namespace {

struct GroupState {
  size_t fft_size = 0;
  size_t step = 0;
  size_t min_len = 0;
  Samples pending;            // input not yet consumed; pending[0] is at pending_start
  int64_t pending_start = 0;  // absolute analysis sample offset
  detail::RealBuffer block;
  detail::ComplexBuffer spectrum;
  detail::WindowEnergy energy;
  const detail::FftPlan* plan = nullptr;
  std::vector<Samples> inverse;  // per distinct template length, this block
};

constexpr size_t kMaxSharedLengths = 8;

struct WorkerScratch {
  detail::ComplexBuffer product;
  detail::RealBuffer output;
  Samples inverse;
};

}  // namespace

struct Correlator::Impl {
  std::shared_ptr<const TemplateBank> bank;
  CorrelatorOptions options;
  detail::ThreadPool pool;
  detail::FftPlans plans;
  std::vector<GroupState> groups;
  std::vector<WorkerScratch> scratch;
  int64_t pushed = 0;

  Impl(std::shared_ptr<const TemplateBank> b, const CorrelatorOptions& o)
      : bank(std::move(b)), options(o), pool(o.threads), plans(o.planner) {
    size_t max_size = 0;
    for (const auto& g : bank->groups()) {
      GroupState s;
      s.fft_size = g.fft_size;
      s.step = g.step_samples();
      s.min_len = g.max_len_samples;
      for (size_t t : g.members) s.min_len = std::min(s.min_len, bank->at(t).len_samples);
      s.block = detail::alloc_real(g.fft_size);
      s.spectrum = detail::alloc_complex(g.fft_size / 2 + 1);
      s.plan = &plans.get(g.fft_size);
      s.pending.reserve(g.fft_size);
      groups.push_back(std::move(s));
      max_size = std::max(max_size, g.fft_size);
    }
    for (size_t w = 0; w < pool.workers(); ++w) {
      WorkerScratch ws;
      ws.product = detail::alloc_complex(max_size / 2 + 1);
      ws.output = detail::alloc_real(max_size);
      scratch.push_back(std::move(ws));
    }
  }

  // One block of group `gi`: pending[0, n_real) zero-padded to L. Emits, for
  // each member, scores for offsets [start, start + step) that lie at or
  // before `last_offset` - M + 1 (the stream's end, when known).
  void process_block(size_t gi, size_t n_real, int64_t stream_end, const ScoreSink& sink) {
    GroupState& g = groups[gi];
    const size_t L = g.fft_size;
    std::copy_n(g.pending.data(), n_real, g.block.get());
    const double block_energy = g.energy.assign(g.block.get(), n_real, L);
    fftwf_execute_dft_r2c(g.plan->forward, g.block.get(), detail::as_fftw(g.spectrum.get()));
    const auto& members = bank->groups()[gi].members;
    const int64_t start = g.pending_start;
    const double guard2 = options.rounding_guard * options.rounding_guard * block_energy;
    const double floor2 = options.floor_rms * options.floor_rms;
    const float inv_l = 1.0f / static_cast<float>(L);
    auto outputs_for = [&](size_t m) {
      int64_t n_out = static_cast<int64_t>(g.step);
      if (stream_end >= 0) n_out = std::min<int64_t>(n_out, stream_end - static_cast<int64_t>(m) - start + 1);
      return std::max<int64_t>(0, n_out);
    };
    // 1 / sqrt(window energy) per output, or 0 for "no score". Templates
    // of one length share it, so it is made once per distinct length when
    // there are few (the usual case: masters of 10, 15, 30, 60 s).
    auto fill_inverse = [&](size_t m, float* inv, size_t n_out) {
      const double e_min = std::max(floor2 * static_cast<double>(m), guard2);
      for (size_t k = 0; k < n_out; ++k) {
        const double e = g.energy.energy(k, m);
        inv[k] = e > e_min ? static_cast<float>(1.0 / std::sqrt(e)) : 0.0f;
      }
    };
    std::vector<size_t> lengths;
    for (size_t t : members) lengths.push_back(bank->at(t).len_samples);
    std::sort(lengths.begin(), lengths.end());
    lengths.erase(std::unique(lengths.begin(), lengths.end()), lengths.end());
    const bool shared = lengths.size() <= kMaxSharedLengths;
    if (shared) {
      g.inverse.resize(lengths.size());
      pool.run(lengths.size(), [&](size_t li, size_t) {
        const size_t n_out = static_cast<size_t>(outputs_for(lengths[li]));
        g.inverse[li].resize(n_out);
        fill_inverse(lengths[li], g.inverse[li].data(), n_out);
      });
    }
    pool.run(members.size(), [&](size_t mi, size_t worker) {
      const size_t t = members[mi];
      const size_t m = bank->at(t).len_samples;
      const size_t n_out = static_cast<size_t>(outputs_for(m));
      if (n_out == 0) return;
      WorkerScratch& ws = scratch[worker];
      const size_t bins = L / 2 + 1;
      const std::complex<float>* tc = bank->conj_spectrum(t);
      const std::complex<float>* x = g.spectrum.get();
      std::complex<float>* p = ws.product.get();
      detail::multiply_spectra(x, tc, p, bins);
      fftwf_execute_dft_c2r(g.plan->inverse, detail::as_fftw(p), ws.output.get());
      const float* inv;
      if (shared) {
        const size_t li = static_cast<size_t>(std::lower_bound(lengths.begin(), lengths.end(), m) - lengths.begin());
        inv = g.inverse[li].data();
      } else {
        ws.inverse.resize(n_out);
        fill_inverse(m, ws.inverse.data(), n_out);
        inv = ws.inverse.data();
      }
      // Normalized in place and handed on a cache-sized chunk at a time, so
      // the sink reads what was just written from cache, not memory.
      float* r = ws.output.get();
      constexpr size_t kChunk = 8192;
      for (size_t c = 0; c < n_out; c += kChunk) {
        const size_t e = std::min(n_out, c + kChunk);
        for (size_t k = c; k < e; ++k) r[k] = std::clamp(r[k] * inv_l * inv[k], -1.0f, 1.0f);
        sink(t, start + static_cast<int64_t>(c), r + c, e - c);
      }
    });
  }

  void consume(GroupState& g, size_t n) {
    n = std::min(n, g.pending.size());
    g.pending.erase(g.pending.begin(), g.pending.begin() + static_cast<long>(n));
    g.pending_start += static_cast<int64_t>(n);
  }
};

Correlator::Correlator(std::shared_ptr<const TemplateBank> bank, const CorrelatorOptions& options)
    : impl_(std::make_unique<Impl>(std::move(bank), options)) {}

Correlator::~Correlator() = default;

void Correlator::push(const float* x, size_t n, const ScoreSink& sink) {
  impl_->pushed += static_cast<int64_t>(n);
  for (size_t gi = 0; gi < impl_->groups.size(); ++gi) {
    GroupState& g = impl_->groups[gi];
    size_t used = 0;
    while (used < n) {
      const size_t take = std::min(n - used, g.fft_size - g.pending.size());
      g.pending.insert(g.pending.end(), x + used, x + used + take);
      used += take;
      if (g.pending.size() == g.fft_size) {
        impl_->process_block(gi, g.fft_size, -1, sink);
        impl_->consume(g, g.step);
      }
    }
  }
}

void Correlator::finish(const ScoreSink& sink) {
  const int64_t end = impl_->pushed;
  for (size_t gi = 0; gi < impl_->groups.size(); ++gi) {
    GroupState& g = impl_->groups[gi];
    while (!g.pending.empty() && g.pending_start + static_cast<int64_t>(g.min_len) <= end) {
      impl_->process_block(gi, g.pending.size(), end, sink);
      impl_->consume(g, g.step);
    }
  }
}

void Correlator::reset() {
  impl_->pushed = 0;
  for (auto& g : impl_->groups) {
    g.pending.clear();
    g.pending_start = 0;
  }
}

int64_t Correlator::samples_pushed() const { return impl_->pushed; }
size_t Correlator::workers() const { return impl_->pool.workers(); }

Samples score_trace(std::shared_ptr<const TemplateBank> bank, size_t t, const Samples& x,
                    const CorrelatorOptions& options, size_t push_size) {
  const size_t m = bank->at(t).len_samples;
  Samples trace(x.size() >= m ? x.size() - m + 1 : 0, 0.0f);
  Correlator c(std::move(bank), options);
  auto sink = [&](size_t ti, int64_t first, const float* s, size_t n) {
    if (ti != t) return;
    for (size_t j = 0; j < n; ++j) {
      const size_t k = static_cast<size_t>(first) + j;
      if (k < trace.size()) trace[k] = s[j];
    }
  };
  for (size_t i = 0; i < x.size(); i += push_size) c.push(x.data() + i, std::min(push_size, x.size() - i), sink);
  c.finish(sink);
  return trace;
}

}  // namespace godwit
