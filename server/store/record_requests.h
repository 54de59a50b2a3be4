// The record's two requests, as the daemon's ops `airings` and `proof`
// take them and as `godwit airings|proof --state-dir` asks them of a local
// store (so both print alike):
//
//   airings {from, to, station?, spot? | advertiser?, limit?, cursor?}
//           -> {"ok":true,"airings":[...],"next"?: cursor}
//   proof   {from, to, advertiser | spot} -> {"ok":true,"proof":{...}}
//
// Errors: bad_request (a field missing or mistyped, an unknown station,
// a bad range), io.
//
// Thread contract: safe for concurrent use (RecordStore is).
#pragma once

#include <nlohmann/json.hpp>

#include "record_store.h"

namespace godwit {

Result<nlohmann::json> airings_op(RecordStore& store, const nlohmann::json& req);
Result<nlohmann::json> proof_op(RecordStore& store, const nlohmann::json& req);

}  // namespace godwit
