// A job's families (sibling discovery, engine/compliance/families.h) kept
// in the store of record and read back by the next job with the same
// masters, so that re-reconciling a day, or the drop folder's day as each
// hour arrives, does not score the library against itself again.
//
// Kept in search_results, kind "families", under a key of: the engine's
// version, the analysis rate, the family options, and each master in the
// job's order by its id and SHA-256 (file_digests), with the families its
// metadata declares. Any change to these (a master added, removed, renamed
// or re-cut, an option) is another key: found again, and kept beside.
// StoredTaskRunner::families (stored_tasks.h) does this.
//
// Thread contract: plain functions.
#pragma once

#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "godwit/compliance/families.h"
#include "godwit/core/error.h"

namespace godwit {

// The key's canonical text for `query` with each master's SHA-256.
std::string families_key(const FamilyQuery& query, const std::vector<std::string>& master_sha256);

// Exact numbers (scores and lags as doubles, segments as "0"/"1" text).
nlohmann::json families_to_json(const Families& families);
// Errors: internal when `j` is not families of `masters` masters
// (a family index, a link or a segment list out of range).
Result<Families> families_from_json(const nlohmann::json& j, size_t masters);

}  // namespace godwit
