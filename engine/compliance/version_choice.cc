#include "godwit/compliance/version_choice.h"

#include <algorithm>
#include <cmath>

namespace godwit {

std::vector<VersionChoice> choose_versions(const std::vector<VersionInput>& in, const Families& fam,
                                           const VersionOptions& o) {
  std::vector<VersionChoice> out;
  std::vector<bool> taken(in.size(), false);
  for (size_t i = 0; i < in.size(); ++i) {
    if (taken[i]) continue;
    VersionChoice c;
    c.members.push_back(i);
    taken[i] = true;
    for (size_t j = i + 1; j < in.size(); ++j) {
      if (taken[j] || !fam.siblings(in[i].master, in[j].master)) continue;
      const double len = std::min(in[i].length_s, in[j].length_s);
      if (std::fabs(in[j].time_s - in[i].time_s) > 0.5 * len) continue;
      if (std::any_of(c.members.begin(), c.members.end(), [&](size_t g) { return in[g].master == in[j].master; }))
        continue;
      c.members.push_back(j);
      taken[j] = true;
    }
    c.winner = i;
    if (c.members.size() > 1) {
      double best = -2;
      for (size_t g : c.members) {
        std::vector<size_t> others;
        for (size_t h : c.members)
          if (h != g) others.push_back(in[h].master);
        const double s = mean_over(*in[g].profile, fam.distinguishing(in[g].master, others));
        c.distinguishing.push_back(s);
        if (s > best || (s == best && std::fabs(in[g].score) > std::fabs(in[c.winner].score))) {
          best = s;
          c.winner = g;
        }
      }
      if (best < o.min_segment_score) {
        c.undetermined = c.members;
      } else {
        for (size_t k = 0; k < c.members.size(); ++k)
          if (best - c.distinguishing[k] < o.margin) c.undetermined.push_back(c.members[k]);
        if (c.undetermined.size() < 2) c.undetermined.clear();
      }
    } else {
      c.distinguishing.push_back(0);
    }
    out.push_back(std::move(c));
  }
  return out;
}

}  // namespace godwit
