#include "godwit/compliance/families.h"

#include <algorithm>
#include <cmath>
#include <numeric>

#include "godwit/audio/resampler.h"
#include "godwit/search/correlator.h"
#include "godwit/search/template_bank.h"
#include "bank_screen.h"
#include "search/pearson.h"

namespace godwit {
namespace {

struct UnionFind {
  std::vector<size_t> parent;
  explicit UnionFind(size_t n) : parent(n) { std::iota(parent.begin(), parent.end(), 0); }
  size_t find(size_t x) { return parent[x] == x ? x : parent[x] = find(parent[x]); }
  void join(size_t a, size_t b) { parent[find(b)] = find(a); }
};


// Best |r| of `t` against `x` zero-padded by |t| on both sides; the lag is
// where t's first sample falls in x (may be negative).
std::pair<double, double> best_alignment(const Samples& t, const Samples& x) {
  std::vector<TemplateInput> in{{"t", "", 0, t}};
  BankOptions bo;
  size_t size = 1024;
  while (size <= t.size()) size *= 2;
  bo.fixed_fft_size = std::max(size * 2, size_t{1} << 15);
  auto bank = TemplateBank::build(std::move(in), bo);
  if (!bank) return {0.0, 0.0};
  Samples padded(t.size(), 0.0f);
  padded.insert(padded.end(), x.begin(), x.end());
  padded.resize(padded.size() + t.size(), 0.0f);
  CorrelatorOptions co;
  co.threads = 1;
  const Samples tr = score_trace(bank.value(), 0, padded, co);
  size_t best = 0;
  for (size_t k = 1; k < tr.size(); ++k)
    if (tr[k] > tr[best]) best = k;
  return {tr.empty() ? 0.0 : tr[best], static_cast<double>(best) - static_cast<double>(t.size())};
}

// Segments of `a` (grid from a's start) that `b`, placed at lag_samples in
// a's time, does not reproduce.
std::vector<bool> distinct_segments(const Samples& a, const Samples& b, double lag_samples, size_t seg,
                                    double below) {
  const size_t n_seg = (a.size() + seg - 1) / seg;
  std::vector<bool> d(n_seg, true);
  const long lag = std::lround(lag_samples);
  for (size_t s = 0; s < n_seg; ++s) {
    const size_t from = s * seg, to = std::min(a.size(), from + seg);
    const long bf = static_cast<long>(from) - lag, bt = static_cast<long>(to) - lag;
    if (bf < 0 || bt > static_cast<long>(b.size()) || to - from < 16) continue;
    d[s] = detail::pearson(a.data() + from, b.data() + bf, to - from, 0.0) < below;
  }
  return d;
}

}  // namespace

std::vector<bool> Families::distinguishing(size_t i, const std::vector<size_t>& others) const {
  std::vector<bool> out;
  for (const auto& l : links) {
    const bool ia = l.a == i, ib = l.b == i;
    if (!ia && !ib) continue;
    const size_t other = ia ? l.b : l.a;
    if (std::find(others.begin(), others.end(), other) == others.end()) continue;
    const auto& d = ia ? l.distinct_a : l.distinct_b;
    if (out.size() < d.size()) out.resize(d.size(), false);
    for (size_t s = 0; s < d.size(); ++s) out[s] = out[s] || d[s];
  }
  return out;
}

Families find_families(const std::vector<std::string>& ids, const std::vector<Samples>& masters, double rate_hz,
                       const std::map<size_t, std::string>& declared, const FamilyOptions& o) {
  const size_t n = masters.size();
  Families f;
  UnionFind uf(n);
  const size_t seg = std::max<size_t>(16, static_cast<size_t>(o.segment_s * rate_hz));
  // Screening (FamilyOptions::screen_rate_hz): the library is searched
  // once at a low rate by a bank of all its masters (bank_screen.h), each
  // pair scored there as it would be exactly (shorter against longer);
  // only pairs that reach screen_below are scored exactly. Siblings share their audio sample for sample, and
  // what they share stays shared at any rate.
  const bool screen = o.screen_rate_hz > 0 && o.screen_rate_hz < 0.5 * rate_hz;
  std::vector<detail::ScreenedPair> passed;
  if (screen) {
    std::vector<Samples> low;
    std::vector<size_t> len_frames;
    for (const auto& m : masters) {
      low.push_back(resample_all(m, rate_hz, o.screen_rate_hz));
      len_frames.push_back(m.size());
    }
    passed = detail::bank_screen_pairs(low, len_frames, o.screen_below);
  }
  auto screened_in = [&](size_t i, size_t j) {
    return std::binary_search(passed.begin(), passed.end(), detail::ScreenedPair{i, j, 0},
                              [](const detail::ScreenedPair& x, const detail::ScreenedPair& y) {
                                return x.a != y.a ? x.a < y.a : x.b < y.b;
                              });
  };
  for (size_t i = 0; i < n; ++i) {
    for (size_t j = i + 1; j < n; ++j) {
      const bool declared_pair = declared.count(i) && declared.count(j) && declared.at(i) == declared.at(j);
      // Shorter against longer; lag expressed as j's start in i's time.
      const bool i_short = masters[i].size() <= masters[j].size();
      if (screen && !declared_pair && !screened_in(i, j)) continue;
      auto [score, lag] = i_short ? best_alignment(masters[i], masters[j]) : best_alignment(masters[j], masters[i]);
      const double lag_j_in_i = i_short ? -lag : lag;
      if (!(score >= o.threshold) && !declared_pair) continue;
      SiblingLink l;
      l.a = i;
      l.b = j;
      l.score = score;
      l.lag_s = lag_j_in_i / rate_hz;
      l.distinct_a = distinct_segments(masters[i], masters[j], lag_j_in_i, seg, o.distinct_below);
      l.distinct_b = distinct_segments(masters[j], masters[i], -lag_j_in_i, seg, o.distinct_below);
      f.links.push_back(std::move(l));
      uf.join(i, j);
    }
  }
  std::map<size_t, size_t> index_of_root;
  f.family_of.resize(n);
  for (size_t i = 0; i < n; ++i) {
    const size_t root = uf.find(i);
    auto it = index_of_root.find(root);
    if (it == index_of_root.end()) {
      it = index_of_root.emplace(root, f.family_name.size()).first;
      f.family_name.push_back(declared.count(i) ? declared.at(i) : ids[i]);
    }
    f.family_of[i] = it->second;
  }
  return f;
}

}  // namespace godwit
