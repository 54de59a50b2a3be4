#include "warp_correlator.h"

#include <algorithm>
#include <cmath>
#include <map>

#include "core/thread_pool.h"

namespace godwit::detail {
namespace {

struct Stream {
  double speed = 1;
  std::vector<size_t> members;          // template indices
  std::vector<std::vector<float>> pending;  // per band; pending[b][0] is lag pending_start
  int64_t pending_start = 0;
  int64_t next_frame = 0;               // next stream frame to read from the recording
};

}  // namespace

struct WarpCorrelator::Impl {
  WarpOptions opt;
  std::vector<WarpTemplate> templates;
  std::vector<double> edges;
  size_t bands = 0;
  size_t max_len = 0;
  size_t fft = 0, step = 0, bins = 0;
  FftPlans plans{Planner::estimate};
  ThreadPool pool;
  SpectralFrames frames;
  std::vector<Stream> streams;
  std::vector<ComplexBuffer> spectra;   // per template: bands x bins, conjugated
  std::vector<RealBuffer> block;        // per band
  std::vector<ComplexBuffer> block_spec;  // per band
  std::vector<std::vector<double>> s1, s2;  // per band prefix sums
  std::vector<ComplexBuffer> product;   // per worker
  std::vector<RealBuffer> output;       // per worker
  std::vector<float> value;             // one stream frame, bands values

  Impl(std::vector<WarpTemplate> t, const WarpOptions& o)
      : opt(o), templates(std::move(t)), pool(o.threads), frames(plans, o.rate_hz, o.window, o.frame_hop) {
    edges = opt.bands.edges_hz(opt.rate_hz);
    bands = opt.bands.count;
    for (const auto& w : templates) max_len = std::max(max_len, w.frames);
    fft = 512;
    while (fft < 2 * max_len) fft *= 2;
    step = fft - max_len + 1;
    bins = fft / 2 + 1;
    const FftPlan& plan = plans.get(fft);
    RealBuffer col = alloc_real(fft);
    ComplexBuffer spec = alloc_complex(bins);
    for (const auto& w : templates) {
      // Each band zero-mean; all bands together unit norm.
      std::vector<double> mean(bands, 0.0);
      for (size_t j = 0; j < w.frames; ++j)
        for (size_t b = 0; b < bands; ++b) mean[b] += w.envelope[j * bands + b];
      for (double& m : mean) m /= static_cast<double>(std::max<size_t>(1, w.frames));
      double norm = 0;
      for (size_t j = 0; j < w.frames; ++j)
        for (size_t b = 0; b < bands; ++b) {
          const double v = w.envelope[j * bands + b] - mean[b];
          norm += v * v;
        }
      const double scale = norm > 0 ? 1.0 / std::sqrt(norm) : 0.0;
      ComplexBuffer all = alloc_complex(bands * bins);
      for (size_t b = 0; b < bands; ++b) {
        std::fill_n(col.get(), fft, 0.0f);
        for (size_t j = 0; j < w.frames; ++j)
          col[j] = static_cast<float>((w.envelope[j * bands + b] - mean[b]) * scale);
        fftwf_execute_dft_r2c(plan.forward, col.get(), as_fftw(spec.get()));
        for (size_t k = 0; k < bins; ++k) all[b * bins + k] = std::conj(spec[k]);
      }
      spectra.push_back(std::move(all));
    }
    // Only the spectra are needed from here on.
    for (auto& w : templates) std::vector<float>().swap(w.envelope);
    for (size_t g = 0; g < opt.speeds.size(); ++g) {
      Stream s;
      s.speed = opt.speeds[g];
      s.pending.resize(bands);
      s.pending_start = s.next_frame = first_lag(s);
      streams.push_back(std::move(s));
    }
    for (size_t ti = 0; ti < templates.size(); ++ti)
      for (size_t g : templates[ti].streams) streams.at(g).members.push_back(ti);
    for (size_t b = 0; b < bands; ++b) {
      block.push_back(alloc_real(fft));
      block_spec.push_back(alloc_complex(bins));
    }
    s1.resize(bands);
    s2.resize(bands);
    for (size_t w = 0; w < pool.workers(); ++w) {
      product.push_back(alloc_complex(bins));
      output.push_back(alloc_real(fft));
    }
    value.resize(bands);
  }

  // A faster stream's first frames would lie before the recording's first
  // frame centre: it starts at the first lag that does not.
  int64_t first_lag(const Stream& s) const {
    const double c0 = 0.5 * static_cast<double>(opt.window);
    return std::max<int64_t>(0, static_cast<int64_t>(std::ceil((c0 * s.speed - c0) / static_cast<double>(opt.hop) - 1e-9)));
  }

  double frame_time(const Stream& s, int64_t k) const {
    return (0.5 * static_cast<double>(opt.window) + static_cast<double>(k) * static_cast<double>(opt.hop)) / s.speed;
  }

  void process_block(Stream& s, size_t n_real, int64_t stream_end, const WarpSink& sink) {
    if (s.members.empty()) return;
    const FftPlan& plan = plans.get(fft);
    std::vector<double> band_energy(bands, 0.0);
    pool.run(bands, [&](size_t b, size_t) {
      float* x = block[b].get();
      const std::vector<float>& p = s.pending[b];
      double mean = 0;
      for (size_t i = 0; i < n_real; ++i) mean += p[i];
      mean /= static_cast<double>(std::max<size_t>(1, n_real));
      auto& a1 = s1[b];
      auto& a2 = s2[b];
      a1.assign(n_real + 1, 0.0);
      a2.assign(n_real + 1, 0.0);
      for (size_t i = 0; i < n_real; ++i) {
        const double v = p[i] - mean;
        x[i] = static_cast<float>(v);
        a1[i + 1] = a1[i] + v;
        a2[i + 1] = a2[i] + v * v;
      }
      std::fill(x + n_real, x + fft, 0.0f);
      band_energy[b] = a2[n_real];
      fftwf_execute_dft_r2c(plan.forward, x, as_fftw(block_spec[b].get()));
    });
    double total = 0;
    for (double e : band_energy) total += e;
    const int64_t start = s.pending_start;
    auto outputs_for = [&](size_t m) {
      int64_t n_out = static_cast<int64_t>(step);
      n_out = std::min<int64_t>(n_out, static_cast<int64_t>(n_real) - static_cast<int64_t>(m) + 1);
      if (stream_end >= 0) n_out = std::min<int64_t>(n_out, stream_end - static_cast<int64_t>(m) - start + 1);
      return std::max<int64_t>(0, n_out);
    };
    // 1 / sqrt(energy over all bands) per lag, per distinct master length.
    std::map<size_t, std::vector<float>> inverse;
    for (size_t t : s.members) inverse[templates[t].frames];
    const double guard = 1e-6 * total;
    for (auto& [m, inv] : inverse) {
      const size_t n_out = static_cast<size_t>(outputs_for(m));
      inv.resize(n_out);
      for (size_t k = 0; k < n_out; ++k) {
        double e = 0;
        for (size_t b = 0; b < bands; ++b) {
          const double a = s1[b][k + m] - s1[b][k];
          e += (s2[b][k + m] - s2[b][k]) - a * a / static_cast<double>(m);
        }
        inv[k] = e > guard && e > 1e-9 * static_cast<double>(m) ? static_cast<float>(1.0 / std::sqrt(e)) : 0.0f;
      }
    }
    const float inv_l = 1.0f / static_cast<float>(fft);
    const size_t g = static_cast<size_t>(&s - streams.data());
    pool.run(s.members.size(), [&](size_t mi, size_t worker) {
      const size_t t = s.members[mi];
      const size_t m = templates[t].frames;
      const std::vector<float>& inv = inverse.at(m);
      if (inv.empty()) return;
      std::complex<float>* p = product[worker].get();
      const std::complex<float>* tc = spectra[t].get();
      multiply_spectra(block_spec[0].get(), tc, p, bins);
      float* pf = reinterpret_cast<float*>(p);
      for (size_t b = 1; b < bands; ++b) {
        const float* xf = reinterpret_cast<const float*>(block_spec[b].get());
        const float* tf = reinterpret_cast<const float*>(tc + b * bins);
        for (size_t k = 0; k < bins; ++k) {
          pf[2 * k] += xf[2 * k] * tf[2 * k] - xf[2 * k + 1] * tf[2 * k + 1];
          pf[2 * k + 1] += xf[2 * k] * tf[2 * k + 1] + xf[2 * k + 1] * tf[2 * k];
        }
      }
      float* r = output[worker].get();
      fftwf_execute_dft_c2r(plan.inverse, as_fftw(p), r);
      for (size_t k = 0; k < inv.size(); ++k) r[k] = std::clamp(r[k] * inv_l * inv[k], -1.0f, 1.0f);
      sink(t, g, start, r, inv.size());
    });
  }

  void consume(Stream& s, size_t n) {
    for (auto& p : s.pending) {
      const size_t k = std::min(n, p.size());
      p.erase(p.begin(), p.begin() + static_cast<long>(k));
    }
    s.pending_start += static_cast<int64_t>(n);
  }

  // Reads every stream frame the recording's frames now cover.
  void produce(const WarpSink& sink) {
    for (auto& s : streams) {
      if (s.members.empty()) continue;
      for (;;) {
        const double t = frame_time(s, s.next_frame);
        if (!frames.covers(t)) break;
        frames.envelope_at(t, edges, s.speed, value.data());
        for (size_t b = 0; b < bands; ++b) s.pending[b].push_back(value[b]);
        ++s.next_frame;
        if (s.pending[0].size() == fft) {
          process_block(s, fft, -1, sink);
          consume(s, step);
        }
      }
    }
    // Frames no stream will read again.
    double oldest = 1e300;
    for (const auto& s : streams)
      if (!s.members.empty()) oldest = std::min(oldest, frames.frame_at(frame_time(s, s.next_frame)));
    if (oldest < 1e300) frames.drop_before(static_cast<int64_t>(std::floor(oldest)) - 1);
  }
};

WarpCorrelator::WarpCorrelator(std::vector<WarpTemplate> templates, const WarpOptions& options)
    : impl_(std::make_unique<Impl>(std::move(templates), options)) {}

WarpCorrelator::~WarpCorrelator() = default;

void WarpCorrelator::push(const float* x, size_t n, const WarpSink& sink) {
  impl_->frames.push(x, n);
  impl_->produce(sink);
}

void WarpCorrelator::finish(const WarpSink& sink) {
  Impl& s = *impl_;
  for (auto& st : s.streams) {
    const int64_t end = st.next_frame;  // frames [0, end) of this stream exist
    while (!st.pending[0].empty()) {
      const size_t n_real = st.pending[0].size();
      s.process_block(st, n_real, end, sink);
      if (n_real <= s.step) break;
      s.consume(st, s.step);
    }
  }
}

void WarpCorrelator::reset() {
  impl_->frames.reset();
  for (auto& s : impl_->streams) {
    for (auto& p : s.pending) p.clear();
    s.pending_start = s.next_frame = impl_->first_lag(s);
  }
}

double WarpCorrelator::offset_of(size_t g, double lag) const {
  return lag * static_cast<double>(impl_->opt.hop) / impl_->streams.at(g).speed;
}

}  // namespace godwit::detail
