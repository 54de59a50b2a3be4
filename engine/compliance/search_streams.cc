#include "godwit/compliance/search_streams.h"

#include <set>

#include "godwit/audio/concat_source.h"
#include "godwit/compliance/reconcile_job.h"

namespace godwit {

SearchStreams::SearchStreams(const Timeline& timeline, std::vector<std::string> alone) : names_(std::move(alone)) {
  const std::set<std::string> taken(names_.begin(), names_.end());
  for (size_t i = 0; i < timeline.runs.size(); ++i) {
    std::string name = "run:" + std::to_string(i);
    while (taken.count(name)) name += "'";  // a file searched alone may be called so
    run_of_.emplace(name, i);
    run_names_.push_back(name);
    names_.push_back(std::move(name));
  }
}

std::optional<RunId> SearchStreams::run_of(const std::string& name) const {
  auto it = run_of_.find(name);
  if (it == run_of_.end()) return std::nullopt;
  return RunId{it->second};
}

SourceOpener SearchStreams::opener(const Timeline& timeline, SourceOpener base) const {
  return [&timeline, base, runs = run_of_](const std::string& path, ChannelChoice choice) -> Result<SourcePtr> {
    auto it = runs.find(path);
    if (it == runs.end()) return base(path, choice);
    if (it->second >= timeline.runs.size()) return Error{ErrorCode::internal, "no such run", path, std::nullopt};
    auto c = ConcatSource::open(path, run_parts(timeline, it->second), base, choice);
    if (!c) return c.error();
    return SourcePtr(std::move(c.value()));
  };
}

}  // namespace godwit
