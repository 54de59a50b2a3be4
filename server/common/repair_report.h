// Where audio sources repaired samples (NaN, Inf, absurd magnitudes read as
// silence: AudioSource::repaired_samples), said to people.
//
// reporting_opener() wraps an opener; the sources it opens pass every call
// through and, when one that repaired samples is closed, `warn` gets one
// line per path per opener: how many samples and near which second the
// first was. Sources opened again for the same path (refinement,
// verification) add no more lines.
//
// Thread contract: the returned opener may be called from several threads.
#pragma once

#include <functional>
#include <string_view>

#include "godwit/audio/audio_source.h"

namespace godwit {

SourceOpener reporting_opener(SourceOpener inner, std::function<void(std::string_view)> warn);

}  // namespace godwit
