// Correlator: overlap-save normalized cross-correlation of every template
// of a bank against one stream of analysis-rate samples.
//
// For template t (zero mean, unit norm, M samples) and recording x the
// score at offset k is the Pearson coefficient of t and x[k, k+M):
//   r(k) = sum_i t_i x_{k+i} / sqrt(sum_i (x_{k+i} - mean_k)^2),  in [-1, 1].
// Per group (one FFT size L, step S = L - Mmax + 1) each block of L samples
// is mean-removed and transformed once; each template of the group costs one
// spectrum product and one inverse transform, yielding S scores.
//
// Guards: a window whose RMS is below `floor_rms`, or whose energy is so
// small next to the block's that float FFT rounding could dominate
// (sqrt(E_window) < rounding_guard * sqrt(E_block)), gets score 0, meaning
// "no score". Scores are clamped to [-1, 1].
//
// Thread contract: one per stream. The sink is called from worker threads,
// for any one template always serially and in increasing offset order.
// Results do not depend on the thread count.
#pragma once

#include <cstdint>
#include <functional>
#include <memory>

#include "godwit/search/template_bank.h"

namespace godwit {

struct CorrelatorOptions {
  int threads = 0;  // <= 0: one per hardware thread
  Planner planner = Planner::estimate;
  // Default: -70 dBFS, below any programme and above 16-bit dither.
  double floor_rms = 3.16e-4;
  // Default 1e-3: about 20 * float epsilon * log2(L) relative error bound
  // of the FFT product, for a score error under 1e-3 (order of magnitude,
  // not a tight bound).
  double rounding_guard = 1e-3;
};

// Receives scores[j] = r(first_offset + j) for one template.
using ScoreSink = std::function<void(size_t template_index, int64_t first_offset,
                                     const float* scores, size_t n)>;

class Correlator {
 public:
  Correlator(std::shared_ptr<const TemplateBank> bank, const CorrelatorOptions& options);
  ~Correlator();
  Correlator(const Correlator&) = delete;
  Correlator& operator=(const Correlator&) = delete;

  // Appends samples; emits the scores that became computable.
  void push(const float* x, size_t n, const ScoreSink& sink);
  // End of stream: emits the remaining scores, up to offset N - M for each
  // template (N samples in all). Offsets past that (the template would run
  // off the end) get no scores.
  void finish(const ScoreSink& sink);
  // Ready for the next recording; plans and buffers are kept.
  void reset();

  int64_t samples_pushed() const;
  size_t workers() const;

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

// Convenience for tests and peers: the whole score trace of template `t`
// against `x` (x.size() - M + 1 values), through the same Correlator.
Samples score_trace(std::shared_ptr<const TemplateBank> bank, size_t t, const Samples& x,
                    const CorrelatorOptions& options = {}, size_t push_size = 1 << 16);

}  // namespace godwit
