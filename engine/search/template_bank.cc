#include "godwit/search/template_bank.h"

#include <algorithm>
#include <cmath>
#include <map>

#include "fft_plans.h"

namespace godwit {

struct TemplateBank::Spectra {
  std::vector<detail::ComplexBuffer> conj;  // empty on demand
  std::vector<Samples> normalized;          // on demand only
};

TemplateBank::~TemplateBank() = default;

const std::complex<float>* TemplateBank::conj_spectrum(size_t i) const {
  return spectra_->conj.empty() ? nullptr : spectra_->conj[i].get();
}

const Samples& TemplateBank::normalized(size_t i) const {
  static const Samples kNone;
  return spectra_->normalized.empty() ? kNone : spectra_->normalized[i];
}

bool TemplateBank::spectra_on_demand() const { return !spectra_->normalized.empty(); }

Result<std::shared_ptr<const TemplateBank>> TemplateBank::build(std::vector<TemplateInput> inputs,
                                                                const BankOptions& options) {
  std::shared_ptr<TemplateBank> bank(new TemplateBank());
  bank->spectra_ = std::make_unique<Spectra>();
  std::vector<size_t> lens;
  std::vector<Samples> normalized;  // released once the spectra exist
  for (auto& in : inputs) {
    const size_t m = in.samples.size();
    if (m < 16) {
      return Error{ErrorCode::invalid_template, "master decodes to almost no audio", in.path,
                   std::nullopt};
    }
    double sum = 0;
    for (float v : in.samples) sum += v;
    const double mean = sum / static_cast<double>(m);
    double energy = 0;
    for (float v : in.samples) energy += (v - mean) * (v - mean);
    const double rms = std::sqrt(energy / static_cast<double>(m));
    // -70 dBFS: nothing but dither or silence.
    if (!(rms > 3.16e-4)) {
      return Error{ErrorCode::invalid_template, "master is silent (RMS below -70 dBFS)", in.path,
                   std::nullopt};
    }
    Samples norm(m);
    const double inv = 1.0 / std::sqrt(energy);
    for (size_t i = 0; i < m; ++i) norm[i] = static_cast<float>((in.samples[i] - mean) * inv);
    PreparedTemplate t;
    t.id = in.id;
    t.path = in.path;
    t.native_rate_hz = in.native_rate_hz;
    t.len_samples = m;
    t.rms = rms;
    bank->templates_.push_back(std::move(t));
    normalized.push_back(std::move(norm));
    lens.push_back(m);
    in.samples = Samples();  // release the caller's copy early
  }
  if (bank->templates_.empty())
    return Error{ErrorCode::usage, "no templates given", "", std::nullopt};

  // FFT sizes.
  std::vector<size_t> sizes;
  const size_t longest = *std::max_element(lens.begin(), lens.end());
  if (options.fixed_fft_size) {
    if (options.fixed_fft_size <= longest)
      return Error{ErrorCode::usage,
                   "fixed FFT size " + std::to_string(options.fixed_fft_size) +
                       " does not exceed the longest template (" + std::to_string(longest) +
                       " samples)",
                   "", std::nullopt};
    sizes.assign(lens.size(), options.fixed_fft_size);
  } else if (options.span_samples) {
    for (size_t m : lens) {
      size_t l = 1;
      while (l < m + options.span_samples) l <<= 1;
      sizes.push_back(l);
    }
  } else {
    FftCostTable local;
    FftCostTable& table = options.costs ? *options.costs : local;
    std::vector<size_t> needed;
    for (size_t m : lens)
      for (size_t s : candidate_fft_sizes(m, options.max_fft_size)) needed.push_back(s);
    std::sort(needed.begin(), needed.end());
    needed.erase(std::unique(needed.begin(), needed.end()), needed.end());
    measure_fft_costs(needed, table);
    sizes = choose_fft_sizes(lens, table, options.max_fft_size, options.spectra_budget_bytes);
  }
  size_t total_bytes = 0;
  if (options.spectra_on_demand)
    for (size_t m : lens) total_bytes += m * sizeof(float);
  else
    for (size_t s : sizes) total_bytes += spectrum_bytes(s);
  if (total_bytes > options.spectra_budget_bytes)
    return Error{ErrorCode::usage,
                 std::string(options.spectra_on_demand ? "the templates' samples need " : "the templates' spectra need ") +
                     std::to_string(total_bytes >> 20) +
                     " MiB, over the memory budget of " +
                     std::to_string(options.spectra_budget_bytes >> 20) +
                     " MiB; raise the budget or split the library",
                 "", std::nullopt};

  // Groups by FFT size, in increasing size.
  std::map<size_t, size_t> group_of_size;
  for (size_t s : sizes) group_of_size[s] = 0;
  for (auto& [s, g] : group_of_size) {
    g = bank->groups_.size();
    TemplateGroup group;
    group.fft_size = s;
    bank->groups_.push_back(group);
  }
  for (size_t i = 0; i < sizes.size(); ++i) {
    auto& t = bank->templates_[i];
    t.fft_size = sizes[i];
    t.group = group_of_size[sizes[i]];
    auto& g = bank->groups_[t.group];
    g.members.push_back(i);
    g.max_len_samples = std::max(g.max_len_samples, t.len_samples);
  }

  if (options.spectra_on_demand) {
    bank->spectra_->normalized = std::move(normalized);
    return std::shared_ptr<const TemplateBank>(std::move(bank));
  }
  // Spectra: conj(FFT(zero-padded normalized template)).
  detail::FftPlans plans(options.planner);
  for (size_t i = 0; i < bank->templates_.size(); ++i) {
    const size_t L = sizes[i];
    const auto& plan = plans.get(L);
    detail::RealBuffer padded = detail::alloc_real(L);
    Samples& norm = normalized[i];
    std::copy(norm.begin(), norm.end(), padded.get());
    std::fill(padded.get() + norm.size(), padded.get() + L, 0.0f);
    detail::ComplexBuffer spec = detail::alloc_complex(L / 2 + 1);
    fftwf_execute_dft_r2c(plan.forward, padded.get(), detail::as_fftw(spec.get()));
    for (size_t k = 0; k < L / 2 + 1; ++k) spec[k] = std::conj(spec[k]);
    bank->spectra_->conj.push_back(std::move(spec));
    norm = Samples();
  }
  return std::shared_ptr<const TemplateBank>(std::move(bank));
}

}  // namespace godwit
