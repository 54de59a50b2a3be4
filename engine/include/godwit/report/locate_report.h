// Documents of a locate result: JSON (other tools read it; keep the names)
// and CSV (one row per match).
//
// JSON: {"analysis_rate_hz": 8000,
//        "complete": true,
//        "templates": [{"id", "path", "duration_s", "fft_size"}],
//        "recordings": [{"path", "format", "duration_s", "native_rate_hz", "channels",
//                        "error": {"code", "message", "offset_s"}   (only when it failed)}],
//        "matches": [{"template", "recording", "offset_s", "score", "polarity", "refined"}]}
// offset_s is rounded to the microsecond, score to 1e-4 (unless `exact`,
// for documents that programs pass on: tasks of a distributed job).
//
// Thread contract: plain functions.
#pragma once

#include <nlohmann/json.hpp>
#include <string>

#include "godwit/search/job.h"

namespace godwit {

nlohmann::json error_to_json(const Error& e, bool exact = false);
nlohmann::json locate_to_json(const LocateResult& r, bool exact = false);
// The result a locate document describes (what locate_to_json wrote). The
// document names a match's recording by path; its place (recording_id) is
// rebuilt from the order matches are listed in (by recording, then offset
// and master), so a file listed twice keeps its matches apart. Errors:
// `internal` for a document that is not one (a match naming no recording
// of the document included).
Result<LocateResult> locate_from_json(const nlohmann::json& j);
Error error_from_json(const nlohmann::json& j);
// Header: template,recording,offset_s,score,polarity (RFC 4180 quoting).
std::string locate_to_csv(const LocateResult& r);

}  // namespace godwit
