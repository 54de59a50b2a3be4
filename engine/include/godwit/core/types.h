// Conventions used across the engine's API.
//
// Units live in names: `_s` seconds, `_ms` milliseconds, `_hz` hertz,
// `_frames` samples per channel, `_samples` mono samples at the stated rate,
// `_bytes` bytes. Sample values are float in [-1, 1] (full scale = 1).
// "Analysis rate" is the single mono rate the correlator works at
// (default 8000 Hz); "native rate" is a file's own rate.
// Offsets are counted from the first sample of a recording; an offset in
// samples is an int64_t so that 24 h at 192 kHz still fits.
#pragma once

#include <cstdint>
#include <vector>

namespace godwit {

using Samples = std::vector<float>;

}  // namespace godwit
