// Sidecar metadata of a master: `<stem>.meta.json` beside the audio file,
// {"title": "...", "advertiser": "...", "family": "..."}; every key
// optional. Masters sharing a "family" are siblings (versions of one spot).
#pragma once

#include <map>
#include <string>
#include <vector>

#include "godwit/compliance/reconcile_job.h"

namespace godwit {

// Reads the sidecars of `masters` that exist; a sidecar that does not
// parse is reported through `problems` and ignored.
std::map<std::string, SpotMeta> load_spot_metadata(const std::vector<std::string>& masters,
                                                   std::vector<std::string>& problems);

}  // namespace godwit
