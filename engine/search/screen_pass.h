// ScreenPass: the screened search of one stream (screen_options.h).
//
// Takes the analysis-rate stream as the Correlator would (the same padded
// samples, the same offsets), correlates it at the screen rate with a bank
// of the masters at that rate, and scores exactly, at the analysis rate,
// the spans around the screen's candidates with the exact bank, each span
// judged by a fresh PeakPicker with the exact options. A span covers the
// candidate's segments of the picker plus `span_segments` on each side, so
// each kept candidate sees the same noise floor as in the full search.
// Keeps only the stream the open spans still need (a few minutes).
//
// Thread contract: one per stream; uses its own worker threads.
#pragma once

#include <cstdint>
#include <memory>
#include <vector>

#include "godwit/search/correlator.h"
#include "godwit/search/peak_picker.h"
#include "godwit/search/screen_options.h"
#include "godwit/search/template_bank.h"

namespace godwit::detail {

struct ScreenStats {
  size_t screen_candidates = 0;  // peaks of the screen, all masters
  size_t spans = 0;              // spans scored exactly
  size_t span_templates = 0;     // (span, master) pairs scored exactly
  // Wall time of each step on the calling thread (its pools included).
  double decimate_s = 0, screen_s = 0, spans_s = 0;
};

class ScreenPass {
 public:
  // REQUIRES: each template of `exact` at an FFT size of at least
  // exact_fft_size_for(its length, picker), its spectrum kept or on demand
  // (a master's transform is then made for each span it is scored over:
  // the screened run_locate keeps only the masters' samples, a quarter to
  // half the memory of their spectra); `screen` holds the same masters
  // in the same order at options.rate_hz.
  ScreenPass(std::shared_ptr<const TemplateBank> exact, std::shared_ptr<const TemplateBank> screen,
             double analysis_rate_hz, const ScreenOptions& options, const PickerOptions& picker,
             const CorrelatorOptions& correlator);
  ~ScreenPass();
  ScreenPass(const ScreenPass&) = delete;
  ScreenPass& operator=(const ScreenPass&) = delete;

  void push(const float* x, size_t n);
  void finish();
  // After finish: template t's exact candidates, in increasing offset
  // (trace indices of the analysis-rate stream, as PeakPicker's).
  std::vector<Candidate> take(size_t t);
  void reset();
  const ScreenStats& stats() const;

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

// A master's FFT size in the exact bank of a screened search: one block
// holds a span of a few segments plus the picker's spans on each side.
size_t exact_fft_size_for(size_t len_samples, const PickerOptions& picker);
// The samples a span adds to a master's length (BankOptions::span_samples).
size_t exact_span_samples(const PickerOptions& picker);

}  // namespace godwit::detail
