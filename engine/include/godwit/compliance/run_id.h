// RunId: a run of consecutive recordings on a timeline (timeline.h): its
// place in Timeline::runs. A run is searched as one stream under a name
// SearchStreams gives it (search_streams.h); that name is never parsed
// back into a run.
//
// Thread contract: a value.
#pragma once

#include <compare>
#include <cstddef>

namespace godwit {

struct RunId {
  size_t index = 0;
  friend auto operator<=>(RunId, RunId) = default;
};

}  // namespace godwit
