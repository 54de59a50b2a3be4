// TemplateBank: the prepared spots, ready for correlation.
//
// Each template is mean-removed and scaled to unit norm at the analysis
// rate, assigned an FFT size (fft_size_chooser.h), and its conjugate-ready
// spectrum computed once. Templates of one FFT size form a group; the
// correlator transforms each recording block once per group.
//
// Thread contract: immutable once built; share as
// std::shared_ptr<const TemplateBank> across threads.
#pragma once

#include <complex>
#include <memory>
#include <string>
#include <vector>

#include "godwit/core/error.h"
#include "godwit/search/fft_size_chooser.h"
#include "godwit/core/types.h"

namespace godwit {

struct TemplateInput {
  std::string id;            // the master's file stem
  std::string path;          // where the master came from (for refinement)
  double native_rate_hz = 0; // the master's own rate
  Samples samples;           // mono, analysis rate
};

struct BankOptions {
  // 0: choose per template by measured cost (default). Otherwise every
  // template uses this power-of-two size (it must exceed the longest).
  size_t fixed_fft_size = 0;
  size_t max_fft_size = size_t{1} << 22;
  // Upper bound on the bytes of all spectra. Default: 288 MiB (a 24 h job
  // with 100 masters of 30 s, speed search included, then peaks under 512 MiB).
  size_t spectra_budget_bytes = size_t{288} << 20;
  Planner planner = Planner::estimate;
  // Measured FFT costs; missing sizes are measured and added.
  FftCostTable* costs = nullptr;
  // When > 0 (and no fixed size): each template's FFT size is the
  // smallest power of two holding its length plus this many samples (the
  // screened search's spans, screen_pass.h).
  size_t span_samples = 0;
  // Keep each template's normalized samples instead of its spectrum
  // (M floats instead of L/2+1 complex, L >= M: a quarter to a half of
  // the memory); conj_spectrum() is then null and the caller transforms
  // normalized(i) itself. For the screened search, which scores few
  // (span, master) pairs (screen_pass.h). The budget then bounds the
  // samples' bytes.
  bool spectra_on_demand = false;
};

struct PreparedTemplate {
  std::string id;
  std::string path;
  double native_rate_hz = 0;
  size_t len_samples = 0;  // M
  size_t fft_size = 0;     // L
  size_t group = 0;        // index into TemplateBank::groups()
  double rms = 0;          // of the master at analysis rate, before normalization
};

struct TemplateGroup {
  size_t fft_size = 0;
  size_t max_len_samples = 0;         // longest template of the group
  std::vector<size_t> members;        // template indices
  size_t step_samples() const { return fft_size - max_len_samples + 1; }
};

class TemplateBank {
 public:
  // Errors: invalid_template (shorter than 0.5 s, or silent).
  static Result<std::shared_ptr<const TemplateBank>> build(std::vector<TemplateInput> inputs,
                                                          const BankOptions& options);
  ~TemplateBank();

  size_t size() const { return templates_.size(); }
  const PreparedTemplate& at(size_t i) const { return templates_[i]; }
  const std::vector<PreparedTemplate>& templates() const { return templates_; }
  const std::vector<TemplateGroup>& groups() const { return groups_; }
  // Spectrum of the normalized template zero-padded to its fft_size,
  // fft_size/2+1 bins, already conjugated (multiply, don't conjugate again).
  // Null when the bank was built with spectra_on_demand.
  const std::complex<float>* conj_spectrum(size_t i) const;
  // With spectra_on_demand: the template mean-removed and scaled to unit
  // norm, whose zero-padded transform conj_spectrum(i) would hold
  // (conjugated). Empty otherwise.
  const Samples& normalized(size_t i) const;
  bool spectra_on_demand() const;

  TemplateBank(const TemplateBank&) = delete;
  TemplateBank& operator=(const TemplateBank&) = delete;

 private:
  TemplateBank() = default;
  struct Spectra;
  std::vector<PreparedTemplate> templates_;
  std::vector<TemplateGroup> groups_;
  std::unique_ptr<Spectra> spectra_;
};

// Shortest template the bank accepts.
constexpr double kMinTemplateSeconds = 0.5;

}  // namespace godwit
