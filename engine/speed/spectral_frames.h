// SpectralFrames: short-time power spectra of a signal, and band-energy
// envelopes read from them at any time and any frequency scale.
//
// Frame f is the Hann-windowed FFT of x[f * hop, f * hop + window); its
// centre is at sample f * hop + window / 2. Each frame is kept as the
// cumulative sum of its power over bins, so the energy of any band, with
// fractional edges, is two interpolated look-ups. An envelope value at a
// time between two frame centres is interpolated linearly between them.
//
// That is what the speed search needs: an airing played s times faster has
// its frame at master time tau at recording time offset + tau / s, and its
// band [lo, hi] Hz at [lo * s, hi * s] Hz.
//
// Envelope values are square roots of band energies (band amplitudes):
// scale-free for the normalized correlation that consumes them. On the
// speed benchmark they found as many airings at 3 dB SNR as cube roots,
// and more than fourth roots, at the cost of one square root.
//
// Thread contract: one per stream; const members may be called from
// several threads while no push() runs.
#pragma once

#include <cstddef>
#include <cstdint>
#include <vector>

#include "search/fft_plans.h"

namespace godwit::detail {

struct EnvelopeBands {
  // Log-spaced bands between low_hz and high_hz (high is capped below
  // Nyquist). Default: 16 bands, 150..3800 Hz (quarter-octave-ish at 8 kHz).
  size_t count = 16;
  double low_hz = 150;
  double high_hz = 3800;
  // Band edges in Hz, count + 1 of them.
  std::vector<double> edges_hz(double rate_hz) const;
};

class SpectralFrames {
 public:
  // window: power of two; hop <= window. Plans come from `plans` (which
  // must outlive this).
  SpectralFrames(FftPlans& plans, double rate_hz, size_t window, size_t hop);
  ~SpectralFrames();
  SpectralFrames(const SpectralFrames&) = delete;
  SpectralFrames& operator=(const SpectralFrames&) = delete;

  // Appends samples; computes every frame that became complete.
  void push(const float* x, size_t n);
  // Frames [first_frame(), end_frame()) are held.
  int64_t first_frame() const { return first_; }
  int64_t end_frame() const { return first_ + static_cast<int64_t>(count_); }
  // Forgets frames before `frame` (memory stays bounded on long streams).
  void drop_before(int64_t frame);
  void reset();

  double rate_hz() const { return rate_hz_; }
  size_t window() const { return window_; }
  size_t hop() const { return hop_; }
  // Centre of frame f, in samples from the first sample.
  double centre(double f) const { return f * static_cast<double>(hop_) + 0.5 * static_cast<double>(window_); }
  // Fractional frame index whose centre is at sample time t.
  double frame_at(double t) const { return (t - 0.5 * static_cast<double>(window_)) / static_cast<double>(hop_); }
  // True when frame_at(t) and the frame after it are held.
  bool covers(double t) const;

  // Square roots of band energies at centre time t (samples), for `edges_hz`
  // scaled by `scale`: out[b] for b < edges.size() - 1. REQUIRES covers(t).
  void envelope_at(double t, const std::vector<double>& edges_hz, double scale, float* out) const;

 private:
  double cumulative(size_t slot, double bin) const;

  double rate_hz_;
  size_t window_, hop_, bins_;
  std::vector<float> hann_;
  RealBuffer frame_;
  ComplexBuffer spectrum_;
  const FftPlan* plan_ = nullptr;
  std::vector<float> pending_;  // samples; the next frame starts at pending_[pending_pos_]
  size_t pending_pos_ = 0;
  int64_t first_ = 0;           // frame index of slot 0
  size_t count_ = 0;            // frames held
  size_t slot0_ = 0;            // ring position of first_
  // Ring of frames, bins_ + 1 cumulative values each; float (summed in
  // double): the envelopes that read them are compressed and correlated
  // coarsely, and a day's refinement holds a few of these rings at once.
  std::vector<float> cum_;
  size_t capacity_ = 0;         // frames the ring can hold before it grows
};

// Envelope of a whole (short) signal at unit scale, from frames every
// `frame_hop` samples, read at centre times window / 2 + j * hop_out for
// every j the frames cover; row-major frames x bands.
std::vector<float> envelope_of(FftPlans& plans, const std::vector<float>& x, double rate_hz, size_t window,
                               size_t frame_hop, size_t hop_out, const EnvelopeBands& bands, size_t& frames_out);

}  // namespace godwit::detail
