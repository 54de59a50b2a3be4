// WarpCorrelator: the coarse step of the speed search (speed_search.h).
//
// The recording's band envelope is read on a grid of speeds: stream g, at
// speed s_g, has frame k at recording time (c0 + k * hop) / s_g with band
// edges scaled by s_g (c0: the centre of the first frame). Each stream is
// correlated, overlap-save, with the envelopes of the masters assigned to
// it. For master t (M frames, each band zero-mean, unit norm over all
// bands) the score at lag k is the normalized correlation over all bands:
//   r(k) = sum_b sum_j t[j,b] w[k+j,b] / sqrt(sum_b E_b(k, M)),
// E_b the energy of band b of the stream about its window mean. Lag k
// stands for an airing starting at recording sample k * hop / s_g.
//
// Thread contract: one per stream of samples. The sink is called from
// worker threads, for any one (master, stream) serially and in increasing
// lag order.
#pragma once

#include <cstdint>
#include <functional>
#include <memory>
#include <vector>

#include "spectral_frames.h"

namespace godwit::detail {

struct WarpTemplate {
  std::vector<float> envelope;  // frames x bands, row-major, at `hop`
  size_t frames = 0;
  std::vector<size_t> streams;  // indices into WarpOptions::speeds
};

struct WarpOptions {
  double rate_hz = 8000;
  size_t window = 1024;     // STFT size, samples
  size_t frame_hop = 200;   // STFT hop of the recording, samples
  size_t hop = 400;         // envelope frame spacing of masters and streams
  EnvelopeBands bands;
  std::vector<double> speeds;
  int threads = 0;
};

using WarpSink = std::function<void(size_t template_index, size_t stream, int64_t first_lag,
                                    const float* scores, size_t n)>;

class WarpCorrelator {
 public:
  WarpCorrelator(std::vector<WarpTemplate> templates, const WarpOptions& options);
  ~WarpCorrelator();
  WarpCorrelator(const WarpCorrelator&) = delete;
  WarpCorrelator& operator=(const WarpCorrelator&) = delete;

  void push(const float* x, size_t n, const WarpSink& sink);
  void finish(const WarpSink& sink);
  void reset();

  // Recording offset (analysis samples) of lag `lag` of stream `g`.
  double offset_of(size_t g, double lag) const;

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

}  // namespace godwit::detail
