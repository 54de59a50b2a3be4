// Documents of a locate result: JSON (other tools read it; keep the names)
// and CSV (one row per match).
//
// JSON: {"analysis_rate_hz": 8000,
//        "complete": true,
//        "templates": [{"id", "path", "duration_s", "fft_size"}],
//        "recordings": [{"path", "format", "duration_s", "native_rate_hz", "channels",
//                        "error": {"code", "message", "offset_s"}   (only when it failed)}],
//        "matches": [{"template", "recording", "offset_s", "score", "polarity", "refined"}]}
// offset_s is rounded to the microsecond, score to 1e-4.
//
// Thread contract: plain functions.
#pragma once

#include <nlohmann/json.hpp>
#include <string>

#include "godwit/job.h"

namespace godwit {

nlohmann::json error_to_json(const Error& e);
nlohmann::json locate_to_json(const LocateResult& r);
// Header: template,recording,offset_s,score,polarity (RFC 4180 quoting).
std::string locate_to_csv(const LocateResult& r);

}  // namespace godwit
