// Choosing an FFT size per template by measured cost per output sample.
//
// For a template of M samples and FFT size L, one block yields L - M + 1
// scores for one inverse FFT and one spectrum product; the forward FFT of
// the block is shared by every template of that size. The chooser measures
// those costs on this machine (FftCostTable) and picks, per template, the L
// with the least cost per score, then shrinks the largest sizes until the
// spectra fit the memory budget (a spectrum costs 8 * (L/2 + 1) bytes).
//
// Thread contract: plain functions and values.
#pragma once

#include <cstddef>
#include <map>
#include <string>
#include <vector>

namespace godwit {

enum class Planner {
  estimate,  // instant planning, slower transforms (tests, one-off runs)
  measure,   // FFTW_MEASURE: slow first planning, cached as wisdom
};

struct FftCost {
  double forward_s = 0;  // one r2c transform
  double inverse_s = 0;  // one c2r transform
  double product_s = 0;  // one spectrum product over L/2+1 bins
};

// Measured costs by FFT size. Keep and pass it back to make the size choice
// repeatable across runs (the command line caches it beside FFTW wisdom).
using FftCostTable = std::map<size_t, FftCost>;

std::string cost_table_to_json(const FftCostTable& table);
// Returns an empty table when `json` does not parse.
FftCostTable cost_table_from_json(const std::string& json);

// Candidate sizes for a template of `len_samples`: powers of two from the
// smallest that exceeds it up to `max_size`.
std::vector<size_t> candidate_fft_sizes(size_t len_samples, size_t max_size);

// Adds measurements for any of `sizes` missing from `table`.
void measure_fft_costs(const std::vector<size_t>& sizes, FftCostTable& table);

// One FFT size per template (same order as `lens_samples`).
// REQUIRES: every size needed is in `table`.
std::vector<size_t> choose_fft_sizes(const std::vector<size_t>& lens_samples,
                                     const FftCostTable& table, size_t max_size,
                                     size_t spectra_budget_bytes);

// Bytes held by one template spectrum at FFT size `size`.
constexpr size_t spectrum_bytes(size_t size) { return 8 * (size / 2 + 1); }

// FFTW wisdom as text, so a caller can keep it on disk.
std::string export_fft_wisdom();
bool import_fft_wisdom(const std::string& wisdom);

}  // namespace godwit
