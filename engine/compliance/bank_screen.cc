#include "bank_screen.h"

#include <algorithm>
#include <cstdint>
#include <limits>
#include <memory>
#include <numeric>

#include "godwit/search/correlator.h"
#include "godwit/search/template_bank.h"

namespace godwit::detail {
namespace {

// Templates searched together: one bank, one correlator. Bounds the
// spectra held at once (a few MiB each at 1 kHz) and lets each batch stop
// where the masters it is scored over end.
constexpr size_t kBatchTemplates = 64;

bool accepted(const Samples& x) {
  std::vector<TemplateInput> one{{"", "", 0, x}};
  BankOptions bo;
  bo.fixed_fft_size = 1024;
  while (bo.fixed_fft_size <= x.size()) bo.fixed_fft_size *= 2;
  return static_cast<bool>(TemplateBank::build(std::move(one), bo));
}

}  // namespace

std::vector<ScreenedPair> bank_screen_pairs(const std::vector<Samples>& low, const std::vector<size_t>& len_frames,
                                            double below) {
  const size_t n = low.size();
  std::vector<ScreenedPair> out;
  if (n < 2) return out;

  // The stream's order: longest first (ties: the higher index first), so
  // that the masters a template is scored over (the longer ones, ties: the
  // higher index) are exactly those before it.
  std::vector<size_t> order(n);
  std::iota(order.begin(), order.end(), 0);
  std::sort(order.begin(), order.end(), [&](size_t x, size_t y) {
    return len_frames[x] != len_frames[y] ? len_frames[x] > len_frames[y] : x > y;
  });
  // The layout: the master at place q starts at start[q]; a gap longer
  // than any template keeps each window from reaching two regions.
  size_t longest = 0;
  for (const auto& m : low) longest = std::max(longest, m.size());
  const size_t gap = longest + 1;
  std::vector<int64_t> start(n);
  int64_t at = static_cast<int64_t>(gap);
  for (size_t q = 0; q < n; ++q) {
    start[q] = at;
    at += static_cast<int64_t>(low[order[q]].size() + gap);
  }
  auto region_end = [&](size_t q) { return start[q] + static_cast<int64_t>(low[order[q]].size()); };
  const Samples zeros(gap, 0.0f);
  FftCostTable costs;  // measured once, for every batch

  // Per template: the place its scores have reached and the best there.
  // The sink is called for one template serially, in increasing offset,
  // so each row is its own.
  struct Row {
    size_t master = 0, place = 0;
    int64_t len = 0;
    size_t region = 0;  // the place being scored
    float best = -std::numeric_limits<float>::infinity();
  };
  for (size_t lo = 1; lo < n; lo += kBatchTemplates) {
    // Templates at places [lo, hi), each scored over the places before it.
    const size_t hi = std::min(n, lo + kBatchTemplates);
    std::vector<Row> rows;
    std::vector<TemplateInput> in;
    for (size_t q = lo; q < hi; ++q) {
      const size_t m = order[q];
      if (!accepted(low[m])) continue;  // pairs with none, as alone
      rows.push_back({m, q, static_cast<int64_t>(low[m].size())});
      in.push_back({std::to_string(m), "", 0, low[m]});
    }
    if (rows.empty()) continue;
    BankOptions bo;
    bo.costs = &costs;
    auto bank = TemplateBank::build(std::move(in), bo);
    if (!bank) continue;
    std::vector<std::vector<ScreenedPair>> found(rows.size());
    auto close = [&](size_t t) {
      Row& r = rows[t];
      if (r.best >= below) {
        const size_t j = order[r.region];
        found[t].push_back({std::min(r.master, j), std::max(r.master, j), r.best});
      }
      r.best = -std::numeric_limits<float>::infinity();
      ++r.region;
    };
    const ScoreSink sink = [&](size_t t, int64_t first, const float* v, size_t count) {
      Row& r = rows[t];
      const int64_t end = first + static_cast<int64_t>(count);
      int64_t k = first;
      while (k < end) {
        while (r.region < r.place && k > region_end(r.region)) close(t);
        if (r.region == r.place) return;
        const int64_t from = start[r.region] - r.len;  // sticking out before its start
        if (k < from) {
          k = from;
          continue;
        }
        const int64_t to = std::min(end, region_end(r.region) + 1);  // up to past its end
        r.best = std::max(r.best, *std::max_element(v + (k - first), v + (to - first)));
        k = to;
      }
    };
    CorrelatorOptions co;
    co.threads = 1;
    Correlator corr(bank.value(), co);
    corr.push(zeros.data(), zeros.size(), sink);
    for (size_t q = 0; q + 1 < hi; ++q) {
      corr.push(low[order[q]].data(), low[order[q]].size(), sink);
      corr.push(zeros.data(), zeros.size(), sink);
    }
    corr.finish(sink);
    for (size_t t = 0; t < rows.size(); ++t) {
      while (rows[t].region < rows[t].place) close(t);
      out.insert(out.end(), found[t].begin(), found[t].end());
    }
  }
  std::sort(out.begin(), out.end(),
            [](const ScreenedPair& x, const ScreenedPair& y) { return x.a != y.a ? x.a < y.a : x.b < y.b; });
  return out;
}

}  // namespace godwit::detail
