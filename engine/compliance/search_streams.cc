#include "godwit/compliance/search_streams.h"

#include <map>
#include <set>

#include "godwit/audio/concat_source.h"
#include "godwit/compliance/reconcile_job.h"

namespace godwit {

SearchStreams::SearchStreams(const Timeline& timeline, std::vector<Alone> alone) {
  for (auto& a : alone) {
    alone_.push_back(a.recording);
    names_.push_back(std::move(a.path));
  }
  const std::set<std::string> taken(names_.begin(), names_.end());
  for (size_t i = 0; i < timeline.runs.size(); ++i) {
    std::string name = "run:" + std::to_string(i);
    while (taken.count(name)) name += "'";  // a file searched alone may be called so
    names_.push_back(std::move(name));
  }
}

std::optional<RunId> SearchStreams::run_of(RecordingId stream) const {
  if (stream.index < alone_.size() || stream.index >= names_.size()) return std::nullopt;
  return RunId{stream.index - alone_.size()};
}

std::optional<RecordingId> SearchStreams::alone_of(RecordingId stream) const {
  if (stream.index >= alone_.size()) return std::nullopt;
  return alone_[stream.index];
}

SourceOpener SearchStreams::opener(const Timeline& timeline, SourceOpener base) const {
  std::map<std::string, size_t> runs;
  for (size_t i = 0; i < this->runs(); ++i) runs.emplace(name(RunId{i}), i);
  return [&timeline, base, runs = std::move(runs)](const std::string& path, ChannelChoice choice) -> Result<SourcePtr> {
    auto it = runs.find(path);
    if (it == runs.end()) return base(path, choice);
    if (it->second >= timeline.runs.size()) return Error{ErrorCode::internal, "no such run", path, std::nullopt};
    auto c = ConcatSource::open(path, run_parts(timeline, it->second), base, choice);
    if (!c) return c.error();
    return SourcePtr(std::move(c.value()));
  };
}

}  // namespace godwit
