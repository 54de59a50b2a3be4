#include "task_plan.h"

#include <algorithm>
#include <cstdio>
#include <map>
#include <set>

namespace godwit {
namespace {

std::string fnv1a_hex(const std::string& s) {
  uint64_t h = 1469598103934665603ull;
  for (unsigned char c : s) {
    h ^= c;
    h *= 1099511628211ull;
  }
  char b[17];
  std::snprintf(b, sizeof b, "%016llx", static_cast<unsigned long long>(h));
  return b;
}

// `part`: the task's place in the plan, so that a recording listed twice
// gives two tasks, as it gives two searches in one process.
PlannedTask make_task(const std::string& job_id, size_t part, nlohmann::json spec) {
  PlannedTask t;
  t.id = fnv1a_hex(job_id + "\n" + std::to_string(part) + "\n" + spec.dump());
  t.spec = std::move(spec);
  return t;
}

}  // namespace

std::vector<PlannedTask> plan_tasks(const std::string& job_id, const nlohmann::json& spec, size_t templates_per_task) {
  std::vector<PlannedTask> out;
  if (spec.value("kind", "") != "locate") {
    out.push_back(make_task(job_id, 0, spec));
    return out;
  }
  const auto templates = spec.at("templates").get<std::vector<std::string>>();
  const size_t batch = std::max<size_t>(1, templates_per_task);
  for (const auto& rec : spec.at("recordings")) {
    for (size_t first = 0; first < templates.size(); first += batch) {
      nlohmann::json t = spec;
      t["recordings"] = nlohmann::json::array({rec});
      t["templates"] = std::vector<std::string>(templates.begin() + static_cast<long>(first),
                                                templates.begin() + static_cast<long>(std::min(templates.size(), first + batch)));
      out.push_back(make_task(job_id, out.size(), std::move(t)));
    }
  }
  return out;
}

Result<nlohmann::json> merge_results(const nlohmann::json& spec, const std::vector<PlannedTask>& tasks,
                                     const std::vector<nlohmann::json>& results) {
  if (tasks.size() != results.size())
    return Error{ErrorCode::internal, "merge: task and result counts differ", "", std::nullopt};
  if (spec.value("kind", "") != "locate") return results.at(0);
  // Templates in job order; recordings in job order, an error reported by
  // any batch kept; matches by recording, then offset, then template.
  std::map<std::string, size_t> rec_order;
  for (const auto& r : spec.at("recordings")) rec_order.emplace(r.get<std::string>(), rec_order.size());
  nlohmann::json out;
  out["analysis_rate_hz"] = results.empty() ? nlohmann::json(8000.0) : results[0].value("analysis_rate_hz", nlohmann::json(8000.0));
  out["templates"] = nlohmann::json::array();
  std::set<std::string> seen_templates;
  std::map<size_t, nlohmann::json> recordings;
  nlohmann::json matches = nlohmann::json::array();
  for (const auto& r : results) {
    if (!r.is_object() || !r.contains("matches") || !r.contains("templates") || !r.contains("recordings"))
      return Error{ErrorCode::internal, "merge: a task result is not a locate document", "", std::nullopt};
    for (const auto& t : r["templates"])
      if (seen_templates.insert(t.value("id", "")).second) out["templates"].push_back(t);
    for (const auto& rec : r["recordings"]) {
      auto it = rec_order.find(rec.value("path", ""));
      const size_t k = it == rec_order.end() ? rec_order.size() : it->second;
      if (!recordings.count(k) || rec.contains("error")) recordings[k] = rec;
    }
    for (const auto& m : r["matches"]) matches.push_back(m);
  }
  std::stable_sort(matches.begin(), matches.end(), [&](const nlohmann::json& a, const nlohmann::json& b) {
    const auto ra = rec_order.find(a.value("recording", "")), rb = rec_order.find(b.value("recording", ""));
    const size_t ia = ra == rec_order.end() ? 0 : ra->second, ib = rb == rec_order.end() ? 0 : rb->second;
    if (ia != ib) return ia < ib;
    const double oa = a.value("offset_s", 0.0), ob = b.value("offset_s", 0.0);
    if (oa != ob) return oa < ob;
    return a.value("template", "") < b.value("template", "");
  });
  bool complete = true;
  out["recordings"] = nlohmann::json::array();
  for (auto& [k, rec] : recordings) {
    if (rec.contains("error")) complete = false;
    out["recordings"].push_back(rec);
  }
  out["complete"] = complete;
  out["matches"] = std::move(matches);
  out["tasks"] = tasks.size();
  return out;
}

}  // namespace godwit
