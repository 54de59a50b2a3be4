#include "godwit/search/fft_size_chooser.h"

#include <nlohmann/json.hpp>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdlib>
#include <limits>

#include "fft_plans.h"

namespace godwit {
namespace {

using Clock = std::chrono::steady_clock;

double seconds_since(Clock::time_point t0) {
  return std::chrono::duration<double>(Clock::now() - t0).count();
}

// Time per call of `fn`, repeated until at least `min_s` has passed.
template <class F>
double time_per_call(F&& fn, double min_s) {
  fn();  // warm up caches and pages
  int reps = 0;
  const auto t0 = Clock::now();
  do {
    fn();
    ++reps;
  } while (seconds_since(t0) < min_s);
  return seconds_since(t0) / reps;
}

FftCost measure_one(size_t size) {
  using namespace detail;
  const size_t bins = size / 2 + 1;
  RealBuffer real = alloc_real(size);
  ComplexBuffer spec = alloc_complex(bins);
  ComplexBuffer tmpl = alloc_complex(bins);
  fftwf_plan fwd = nullptr, inv = nullptr;
  {
    std::lock_guard planner(fftw_planner_mutex());
    // Plans known from wisdom are the ones the run will use; otherwise an
    // estimate plan gives the relative cost between sizes.
    const int n = static_cast<int>(size);
    fwd = fftwf_plan_dft_r2c_1d(n, real.get(), as_fftw(spec.get()), FFTW_MEASURE | FFTW_WISDOM_ONLY);
    if (!fwd) fwd = fftwf_plan_dft_r2c_1d(n, real.get(), as_fftw(spec.get()), FFTW_ESTIMATE);
    inv = fftwf_plan_dft_c2r_1d(n, as_fftw(spec.get()), real.get(), FFTW_MEASURE | FFTW_WISDOM_ONLY);
    if (!inv) inv = fftwf_plan_dft_c2r_1d(n, as_fftw(spec.get()), real.get(), FFTW_ESTIMATE);
  }
  for (size_t i = 0; i < size; ++i) real[i] = static_cast<float>((i * 7919) % 1000) * 1e-3f - 0.5f;
  for (size_t i = 0; i < bins; ++i) tmpl[i] = {0.5f, -0.25f};
  const double min_s = 0.02;
  FftCost c;
  c.forward_s = time_per_call([&] { fftwf_execute_dft_r2c(fwd, real.get(), as_fftw(spec.get())); }, min_s);
  c.product_s = time_per_call(
      [&] {
        multiply_spectra(spec.get(), tmpl.get(), spec.get(), bins);
      },
      min_s);
  c.inverse_s = time_per_call([&] { fftwf_execute_dft_c2r(inv, as_fftw(spec.get()), real.get()); }, min_s);
  {
    std::lock_guard planner(fftw_planner_mutex());
    fftwf_destroy_plan(fwd);
    fftwf_destroy_plan(inv);
  }
  return c;
}

double cost_per_output(const FftCost& c, size_t size, size_t len, size_t sharing) {
  if (size <= len) return std::numeric_limits<double>::infinity();
  const double outputs = static_cast<double>(size - len + 1);
  return (c.forward_s / static_cast<double>(std::max<size_t>(1, sharing)) + c.inverse_s + c.product_s) /
         outputs;
}

}  // namespace

std::string cost_table_to_json(const FftCostTable& table) {
  nlohmann::json j = nlohmann::json::object();
  for (const auto& [size, c] : table)
    j[std::to_string(size)] = {{"forward_s", c.forward_s}, {"inverse_s", c.inverse_s},
                               {"product_s", c.product_s}};
  return j.dump(2);
}

FftCostTable cost_table_from_json(const std::string& text) {
  FftCostTable table;
  try {
    const auto j = nlohmann::json::parse(text);
    for (const auto& [key, v] : j.items()) {
      FftCost c{v.at("forward_s").get<double>(), v.at("inverse_s").get<double>(),
                v.at("product_s").get<double>()};
      if (c.forward_s > 0 && c.inverse_s > 0 && c.product_s >= 0) table[std::stoul(key)] = c;
    }
  } catch (const std::exception&) {
    table.clear();
  }
  return table;
}

std::vector<size_t> candidate_fft_sizes(size_t len_samples, size_t max_size) {
  // At least one candidate, even when the template needs more than max_size.
  std::vector<size_t> sizes;
  size_t size = 1024;
  while (size <= len_samples) size *= 2;
  do {
    sizes.push_back(size);
    size *= 2;
  } while (size <= max_size);
  return sizes;
}

void measure_fft_costs(const std::vector<size_t>& sizes, FftCostTable& table) {
  for (size_t size : sizes)
    if (!table.count(size)) table[size] = measure_one(size);
}

std::vector<size_t> choose_fft_sizes(const std::vector<size_t>& lens, const FftCostTable& table,
                                     size_t max_size, size_t budget_bytes) {
  std::vector<size_t> chosen(lens.size());
  // Each template's best size assuming the forward transform is shared by
  // all templates (they mostly land in one or two groups).
  for (size_t i = 0; i < lens.size(); ++i) {
    double best = std::numeric_limits<double>::infinity();
    for (size_t size : candidate_fft_sizes(lens[i], max_size)) {
      auto it = table.find(size);
      if (it == table.end()) continue;
      const double c = cost_per_output(it->second, size, lens[i], lens.size());
      if (c < best) {
        best = c;
        chosen[i] = size;
      }
    }
  }
  // Memory: shrink the size whose step down costs least until within budget.
  auto total = [&] {
    size_t t = 0;
    for (size_t s : chosen) t += spectrum_bytes(s);
    return t;
  };
  while (total() > budget_bytes) {
    size_t pick = lens.size();
    double least = std::numeric_limits<double>::infinity();
    for (size_t i = 0; i < lens.size(); ++i) {
      const size_t smaller = chosen[i] / 2;
      if (smaller <= lens[i] || !table.count(smaller)) continue;
      const double delta = cost_per_output(table.at(smaller), smaller, lens[i], lens.size()) -
                           cost_per_output(table.at(chosen[i]), chosen[i], lens[i], lens.size());
      if (delta < least) {
        least = delta;
        pick = i;
      }
    }
    if (pick == lens.size()) break;  // nothing left to shrink: the caller reports the budget
    chosen[pick] /= 2;
  }
  return chosen;
}

std::string export_fft_wisdom() {
  std::lock_guard planner(detail::fftw_planner_mutex());
  char* text = fftwf_export_wisdom_to_string();
  if (!text) return {};
  std::string s(text);
  std::free(text);  // FFTW docs: the caller frees the string with free()
  return s;
}

bool import_fft_wisdom(const std::string& wisdom) {
  std::lock_guard planner(detail::fftw_planner_mutex());
  return fftwf_import_wisdom_from_string(wisdom.c_str()) != 0;
}

}  // namespace godwit
