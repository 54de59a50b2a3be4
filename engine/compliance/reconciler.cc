#include "godwit/compliance/reconciler.h"

#include <algorithm>
#include <cctype>
#include <cmath>
#include <numeric>
#include <tuple>

#include "min_cost_assignment.h"

namespace godwit {
namespace {

// Pair costs as exact integers: (outside the window << 24 | penalty in
// 10 ms) << 20 | tie-break ranks, penalty = |deviation| + one window for a
// sibling. A placement left without an airing costs more than the pairs of
// a whole group together, so the matching serves as many placements as it
// can first.
//
// A sibling costs a window's worth of deviation, not more than any
// deviation: two placements of a family a minute apart, aired as a cut
// airing whose version cannot be told and a whole airing of the first
// placement's version at the second placement's time, are the slot's
// airings with one wrong copy (16 s and 0.4 s off), not two airings 43 s
// and 59 s off their slots with the versions swapped.
constexpr int kDevBits = 24, kRankBits = 10;
constexpr int64_t kMaxPair = int64_t{4} << (kDevBits + 2 * kRankBits);

struct Candidate {
  size_t p, a;
  int klass;      // 2 × outside the window + sibling
  double dev_s;
  double window_s;
};

int64_t pair_cost(const Candidate& c, size_t rank_p, size_t rank_a) {
  const double penalty_s = std::fabs(c.dev_s) + (c.klass % 2 ? c.window_s : 0.0);
  const int64_t dev = std::min<int64_t>((int64_t{1} << kDevBits) - 1, std::llround(penalty_s * 100));
  const int64_t cap = (int64_t{1} << kRankBits) - 1;
  const int64_t tie = (std::min<int64_t>(cap, static_cast<int64_t>(rank_p)) << kRankBits) |
                      std::min<int64_t>(cap, static_cast<int64_t>(rank_a));
  return ((static_cast<int64_t>(c.klass / 2) << kDevBits | dev) << (2 * kRankBits)) | tie;
}

struct DisjointSets {
  std::vector<size_t> up;
  explicit DisjointSets(size_t n) : up(n) { std::iota(up.begin(), up.end(), 0); }
  size_t find(size_t x) {
    while (up[x] != x) x = up[x] = up[up[x]];
    return x;
  }
  void join(size_t a, size_t b) { up[find(a)] = find(b); }
};

std::string lower(std::string s) {
  for (auto& c : s) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return s;
}

size_t edit_distance(const std::string& a, const std::string& b) {
  std::vector<size_t> row(b.size() + 1);
  std::iota(row.begin(), row.end(), 0);
  for (size_t i = 1; i <= a.size(); ++i) {
    size_t diag = row[0];
    row[0] = i;
    for (size_t j = 1; j <= b.size(); ++j) {
      const size_t up = row[j];
      row[j] = std::min({row[j] + 1, row[j - 1] + 1, diag + (a[i - 1] == b[j - 1] ? 0 : 1)});
      diag = up;
    }
  }
  return row[b.size()];
}

}  // namespace

const char* verdict_name(VerdictStatus s) {
  switch (s) {
    case VerdictStatus::aired: return "aired";
    case VerdictStatus::early: return "early";
    case VerdictStatus::late: return "late";
    case VerdictStatus::missing: return "missing";
    case VerdictStatus::partial: return "partial";
    case VerdictStatus::wrong_version: return "wrong_version";
    case VerdictStatus::not_recorded: return "not_recorded";
    case VerdictStatus::unknown_spot: return "unknown_spot";
  }
  return "missing";
}

const std::vector<VerdictStatus>& all_verdicts() {
  static const std::vector<VerdictStatus> all{VerdictStatus::aired,         VerdictStatus::early,
                                              VerdictStatus::late,          VerdictStatus::partial,
                                              VerdictStatus::wrong_version, VerdictStatus::missing,
                                              VerdictStatus::not_recorded,  VerdictStatus::unknown_spot};
  return all;
}

double VerdictOptions::horizon_for(double window_s) const {
  if (horizon_s) return std::max(*horizon_s, window_s);
  return std::max(window_s, horizon_windows * window_s + horizon_extra_s);
}

std::string suggest_spot(const std::string& spot, const std::map<std::string, double>& library) {
  const std::string want = lower(spot);
  for (const auto& [id, len] : library)
    if (lower(id) == want) return id;
  std::string best;
  size_t best_d = 3;
  for (const auto& [id, len] : library) {
    const size_t d = edit_distance(want, lower(id));
    if (d < best_d && 3 * d < std::max(want.size(), id.size())) {
      best_d = d;
      best = id;
    }
  }
  return best;
}

std::pair<std::vector<LocalSpan>, std::vector<LocalSpan>> split_by_cover(const LocalSpan& span,
                                                                         const std::vector<LocalSpan>& covered) {
  std::vector<LocalSpan> out, in;
  LocalSeconds t = span.first;
  for (const auto& [from, to] : covered) {
    if (to <= t) continue;
    if (from >= span.second) break;
    if (from > t) out.push_back({t, from});
    const LocalSeconds end = std::min(to, span.second);
    in.push_back({std::max(from, t), end});
    t = end;
    if (t >= span.second) break;
  }
  if (t < span.second) out.push_back({t, span.second});
  return {out, in};
}

Reconciliation reconcile(const std::vector<Placement>& placements, const std::vector<AiringRef>& airings,
                         const SiblingTest& siblings, const VerdictOptions& o, const VerdictContext& ctx) {
  Reconciliation r;
  r.verdicts.resize(placements.size());
  auto known = [&](const std::string& spot) { return ctx.library_length_s.empty() || ctx.library_length_s.count(spot); };

  // Candidate pairs, and the groups of placements and airings they connect.
  std::vector<Candidate> cands;
  DisjointSets sets(placements.size() + airings.size());
  for (size_t p = 0; p < placements.size(); ++p) {
    const Placement& pl = placements[p];
    r.verdicts[p].placement = p;
    if (!known(pl.spot)) continue;
    const double horizon = o.horizon_for(pl.window_s);
    for (size_t a = 0; a < airings.size(); ++a) {
      const AiringRef& ar = airings[a];
      const bool same = ar.spot == pl.spot || std::find(ar.undetermined_among.begin(), ar.undetermined_among.end(),
                                                         pl.spot) != ar.undetermined_among.end();
      if (!same && !(siblings && siblings(pl.spot, ar.spot))) continue;
      const double dev = ar.aired_s - pl.planned_s;
      if (std::fabs(dev) > horizon) continue;
      cands.push_back({p, a, (std::fabs(dev) > pl.window_s ? 2 : 0) + (same ? 0 : 1), dev, pl.window_s});
      sets.join(p, placements.size() + a);
    }
  }

  // Each group matched on its own.
  std::map<size_t, std::vector<size_t>> group_rows, group_cols;
  for (const auto& c : cands) {
    const size_t g = sets.find(c.p);
    group_rows[g].push_back(c.p);
    group_cols[g].push_back(c.a);
  }
  std::vector<bool> used(airings.size(), false);
  for (auto& [g, rows] : group_rows) {
    auto& cols = group_cols[g];
    auto by_plan = [&](size_t x, size_t y) {
      return std::tie(placements[x].planned_s, placements[x].slot, x) < std::tie(placements[y].planned_s, placements[y].slot, y);
    };
    std::sort(rows.begin(), rows.end(), by_plan);
    rows.erase(std::unique(rows.begin(), rows.end()), rows.end());
    std::sort(cols.begin(), cols.end(), [&](size_t x, size_t y) {
      return std::tie(airings[x].aired_s, x) < std::tie(airings[y].aired_s, y);
    });
    cols.erase(std::unique(cols.begin(), cols.end()), cols.end());
    std::map<size_t, size_t> row_at, col_at;
    for (size_t i = 0; i < rows.size(); ++i) row_at[rows[i]] = i;
    for (size_t j = 0; j < cols.size(); ++j) col_at[cols[j]] = j;
    // Columns: the group's airings, then one "no airing" column per row.
    using Cost = detail::AssignmentCost;
    const Cost none = static_cast<Cost>(kMaxPair) * static_cast<Cost>(rows.size() + 1);
    std::vector<std::vector<Cost>> cost(rows.size(), std::vector<Cost>(cols.size() + rows.size(), none + 1));
    for (auto& row : cost) std::fill(row.begin() + static_cast<std::ptrdiff_t>(cols.size()), row.end(), none);
    std::map<std::pair<size_t, size_t>, const Candidate*> pair_of;
    for (const auto& c : cands) {
      auto it = row_at.find(c.p);
      if (it == row_at.end()) continue;
      const size_t i = it->second, j = col_at.at(c.a);
      cost[i][j] = pair_cost(c, i, j);
      pair_of[{i, j}] = &c;
    }
    const auto col_of = detail::min_cost_assignment(cost);
    for (size_t i = 0; i < rows.size(); ++i) {
      const size_t j = col_of[i];
      if (j >= cols.size()) continue;
      const Candidate& c = *pair_of.at({i, j});
      Verdict& v = r.verdicts[c.p];
      const Placement& pl = placements[c.p];
      const AiringRef& ar = airings[c.a];
      used[c.a] = true;
      v.airing = c.a;
      v.deviation_s = c.dev_s;
      if (c.klass % 2 == 1) v.status = VerdictStatus::wrong_version;
      else if (ar.coverage < o.partial_below) v.status = VerdictStatus::partial;
      else if (v.deviation_s < -pl.window_s) v.status = VerdictStatus::early;
      else if (v.deviation_s > pl.window_s) v.status = VerdictStatus::late;
      else v.status = VerdictStatus::aired;
    }
  }

  // Placements without an airing.
  for (size_t p = 0; p < placements.size(); ++p) {
    Verdict& v = r.verdicts[p];
    const Placement& pl = placements[p];
    if (!known(pl.spot)) {
      v.status = VerdictStatus::unknown_spot;
      v.suggestion = suggest_spot(pl.spot, ctx.library_length_s);
      continue;
    }
    if (v.airing || !ctx.recorded) continue;
    const auto it = ctx.library_length_s.find(pl.spot);
    const double length_s = it == ctx.library_length_s.end() ? 0 : it->second;
    auto [out, in] = split_by_cover({pl.planned_s - pl.window_s, pl.planned_s + pl.window_s + length_s}, *ctx.recorded);
    if (out.empty()) continue;  // wholly recorded: missing
    v.status = VerdictStatus::not_recorded;
    v.unrecorded = std::move(out);
    v.recorded = std::move(in);
  }
  for (size_t a = 0; a < airings.size(); ++a)
    if (!used[a]) r.unscheduled.push_back(a);
  std::stable_sort(r.unscheduled.begin(), r.unscheduled.end(),
                   [&](size_t x, size_t y) { return airings[x].aired_s < airings[y].aired_s; });
  return r;
}

}  // namespace godwit
