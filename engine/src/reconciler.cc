#include "godwit/reconciler.h"

#include <algorithm>
#include <cmath>
#include <tuple>

namespace godwit {

const char* verdict_name(VerdictStatus s) {
  switch (s) {
    case VerdictStatus::aired: return "aired";
    case VerdictStatus::early: return "early";
    case VerdictStatus::late: return "late";
    case VerdictStatus::missing: return "missing";
    case VerdictStatus::partial: return "partial";
    case VerdictStatus::wrong_version: return "wrong_version";
  }
  return "missing";
}

Reconciliation reconcile(const std::vector<Placement>& placements, const std::vector<AiringRef>& airings,
                         const SiblingTest& siblings, const VerdictOptions& o) {
  struct Candidate {
    bool sibling;
    bool outside;
    double abs_dev;
    LocalSeconds planned_s;
    const std::string* slot;
    LocalSeconds aired_s;
    size_t p, a;
  };
  std::vector<Candidate> cands;
  for (size_t p = 0; p < placements.size(); ++p) {
    const Placement& pl = placements[p];
    for (size_t a = 0; a < airings.size(); ++a) {
      const AiringRef& ar = airings[a];
      const bool same = ar.spot == pl.spot || std::find(ar.undetermined_among.begin(), ar.undetermined_among.end(),
                                                         pl.spot) != ar.undetermined_among.end();
      if (!same && !(siblings && siblings(pl.spot, ar.spot))) continue;
      const double dev = ar.aired_s - pl.planned_s;
      if (std::fabs(dev) > std::max(o.horizon_s, pl.window_s)) continue;
      cands.push_back({!same, std::fabs(dev) > pl.window_s, std::fabs(dev), pl.planned_s, &pl.slot, ar.aired_s, p, a});
    }
  }
  std::sort(cands.begin(), cands.end(), [](const Candidate& x, const Candidate& y) {
    return std::tie(x.outside, x.sibling, x.abs_dev, x.planned_s, *x.slot, x.aired_s, x.a) <
           std::tie(y.outside, y.sibling, y.abs_dev, y.planned_s, *y.slot, y.aired_s, y.a);
  });
  Reconciliation r;
  r.verdicts.resize(placements.size());
  for (size_t p = 0; p < placements.size(); ++p) r.verdicts[p].placement = p;
  std::vector<bool> used(airings.size(), false);
  for (const auto& c : cands) {
    Verdict& v = r.verdicts[c.p];
    if (v.airing || used[c.a]) continue;
    used[c.a] = true;
    v.airing = c.a;
    const Placement& pl = placements[c.p];
    const AiringRef& ar = airings[c.a];
    v.deviation_s = ar.aired_s - pl.planned_s;
    if (c.sibling) v.status = VerdictStatus::wrong_version;
    else if (ar.coverage < o.partial_below) v.status = VerdictStatus::partial;
    else if (v.deviation_s < -pl.window_s) v.status = VerdictStatus::early;
    else if (v.deviation_s > pl.window_s) v.status = VerdictStatus::late;
    else v.status = VerdictStatus::aired;
  }
  for (size_t a = 0; a < airings.size(); ++a)
    if (!used[a]) r.unscheduled.push_back(a);
  std::stable_sort(r.unscheduled.begin(), r.unscheduled.end(),
                   [&](size_t x, size_t y) { return airings[x].aired_s < airings[y].aired_s; });
  return r;
}

}  // namespace godwit
