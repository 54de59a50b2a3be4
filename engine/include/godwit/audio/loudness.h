// Loudness of spans of audio: ITU-R BS.1770 integrated loudness (LUFS /
// LKFS) through libebur128, on every channel of the source (BS.1770 weighs
// and sums channels itself; a mono downmix would read 3 dB low for a
// stereo programme).
//
// Indicative only: not a certified measurement. Local regulation and
// certified meters decide.
//
// Thread contract: plain functions.
#pragma once

#include <cstdint>
#include <optional>

#include "godwit/audio/audio_source.h"

namespace godwit {

// Integrated loudness of interleaved samples. Empty when the span is
// silent or shorter than one 400 ms block (BS.1770 gating leaves nothing).
std::optional<double> integrated_lufs(const float* interleaved, size_t frames, int channels, double rate_hz);

// Integrated loudness of [start_frame, start_frame + frames) of `source`
// (native rate, all channels). Errors as AudioSource::seek/read_interleaved.
Result<std::optional<double>> measure_span_lufs(AudioSource& source, int64_t start_frame, int64_t frames);

}  // namespace godwit
