// A connection to godwitd for the history commands (`godwit airings|proof
// --connect HOST:PORT`): one JSON request line out, one response line in.
//
// Thread contract: one per thread.
#pragma once

#include <memory>
#include <nlohmann/json.hpp>
#include <string>

#include "godwit/core/error.h"

namespace godwit {

class RecordClient {
 public:
  RecordClient();
  ~RecordClient();
  // Errors: usage (not HOST:PORT), unavailable.
  Status open(const std::string& host_port);
  // The response object; `token` is added when not empty. Errors:
  // unavailable (the connection broke or the reply is not JSON).
  Result<nlohmann::json> request(nlohmann::json req, const std::string& token);

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

// The first line of `path` (the daemon's shared token); empty when `path` is.
// Errors: unreadable.
Result<std::string> read_token_file(const std::string& path);

}  // namespace godwit
