// TemplateBank with spectra on demand (the screened search's exact bank):
// what it keeps, and that it is what the spectra are made from.
#include "godwit/search/template_bank.h"

#include <doctest/doctest.h>

#include <cmath>
#include <complex>
#include <vector>

#include "synth.h"

using namespace godwit;

namespace {

std::vector<TemplateInput> inputs(const std::vector<Samples>& masters) {
  std::vector<TemplateInput> in;
  for (size_t i = 0; i < masters.size(); ++i) {
    std::string id = "t";  // appended: GCC 12's -Wrestrict false positive (PR 105329)
    id += std::to_string(i);
    in.push_back({id, "mem:t", 8000, masters[i]});
  }
  return in;
}

// The naive DFT of x zero-padded to l, bin k (the textbook definition,
// X[k] = sum_n x[n] exp(-2 pi i k n / l); no FFT library involved).
std::complex<double> dft_bin(const Samples& x, size_t l, size_t k) {
  std::complex<double> acc = 0;
  for (size_t n = 0; n < x.size(); ++n) {
    const double ph = -2.0 * M_PI * static_cast<double>(k) * static_cast<double>(n) / static_cast<double>(l);
    acc += static_cast<double>(x[n]) * std::complex<double>(std::cos(ph), std::sin(ph));
  }
  return acc;
}

}  // namespace

TEST_CASE("a bank with spectra on demand keeps each master normalized, and its transform is the kept spectrum") {
  const std::vector<Samples> masters{synth::spot(1.5, 8000, 41), synth::spot(0.75, 8000, 42)};
  BankOptions kept;
  kept.planner = Planner::estimate;
  kept.span_samples = 4096;
  BankOptions lazy = kept;
  lazy.spectra_on_demand = true;
  auto a = TemplateBank::build(inputs(masters), kept);
  auto b = TemplateBank::build(inputs(masters), lazy);
  REQUIRE(a.ok());
  REQUIRE(b.ok());
  const TemplateBank& full = *a.value();
  const TemplateBank& demand = *b.value();
  CHECK(!full.spectra_on_demand());
  CHECK(demand.spectra_on_demand());
  CHECK(demand.conj_spectrum(0) == nullptr);
  CHECK(full.normalized(0).empty());
  for (size_t i = 0; i < masters.size(); ++i) {
    CAPTURE(i);
    // The same FFT sizes and groups either way.
    CHECK(demand.at(i).fft_size == full.at(i).fft_size);
    CHECK(demand.at(i).group == full.at(i).group);
    // Normalized as the correlation needs it: mean removed, unit energy
    // (the definition of the normalized template; common practice).
    const Samples& x = demand.normalized(i);
    REQUIRE(x.size() == masters[i].size());
    double sum = 0, energy = 0;
    for (float v : x) {
      sum += v;
      energy += static_cast<double>(v) * v;
    }
    CHECK(std::fabs(sum) < 1e-3);
    CHECK(energy == doctest::Approx(1.0).epsilon(1e-4));
    // Its zero-padded DFT, conjugated, is the spectrum the other bank keeps
    // (a few bins, by the textbook DFT).
    const size_t l = full.at(i).fft_size;
    for (size_t k : {size_t{0}, size_t{1}, size_t{37}, l / 8, l / 2}) {
      CAPTURE(k);
      const std::complex<double> want = std::conj(dft_bin(x, l, k));
      const std::complex<float> got = full.conj_spectrum(i)[k];
      CHECK(std::abs(std::complex<double>(got) - want) < 1e-3 * (1 + std::abs(want)));
    }
  }
}

TEST_CASE("with spectra on demand the budget bounds the masters' samples, not their spectra") {
  // 100 masters of 30 s at 8 kHz: 96 MB of samples; their spectra at the
  // screened search's sizes (2^19 points each) would take 200 MB.
  std::vector<Samples> masters(100, synth::spot(30.0, 8000, 43));
  BankOptions o;
  o.planner = Planner::estimate;
  o.span_samples = 40000;
  o.spectra_budget_bytes = size_t{128} << 20;
  o.spectra_on_demand = true;
  CHECK(TemplateBank::build(inputs(masters), o).ok());
  o.spectra_on_demand = false;
  auto refused = TemplateBank::build(inputs(masters), o);
  REQUIRE(!refused.ok());
  CHECK(refused.error().message.find("over the memory budget") != std::string::npos);
  o.spectra_on_demand = true;
  o.spectra_budget_bytes = size_t{64} << 20;
  auto small = TemplateBank::build(inputs(masters), o);
  REQUIRE(!small.ok());
  CHECK(small.error().message.find("samples need") != std::string::npos);
}
