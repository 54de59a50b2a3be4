// The proof of performance's files: OUT/proof.json (the document of
// build_proof), OUT/proof.csv (one line per placement and per unscheduled
// airing) and OUT/proof.html (proof_page.h), each written atomically
// (atomic_file.h): a reader sees the old file or the whole new one.
//
// Thread contract: plain functions; two calls must not share OUT.
#pragma once

#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "godwit/core/error.h"

namespace godwit {

std::string proof_to_csv(const nlohmann::json& proof);

// Creates OUT when missing. Returns the paths written. Errors: io.
Result<std::vector<std::string>> write_proof_files(const nlohmann::json& proof, const std::string& out_dir);

}  // namespace godwit
