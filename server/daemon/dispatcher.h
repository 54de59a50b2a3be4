// Dispatcher: one request line in, one response object out. Knows no
// sockets: the session frames lines and writes what this returns.
//
// Requests: {"op": "...", "id": number or string (echoed), "token": "..." (when required), ...}
// A request nesting arrays and objects over kMaxRequestDepth deep, or whose
// id is anything else or a string over kMaxIdBytes, is refused
// (bad_request, no id echoed) before anything else is looked at.
//   submit {job}            -> {"ok":true,"job":"<id>"}          errors: bad_request, forbidden, busy, too_large, ...
//   status {job}            -> {"ok":true,"job","state","progress", "error"?}
//   result {job}            -> {"ok":true,"job","result":{...}}  (job done)
//   cancel {job}            -> {"ok":true,"job","cancelled":true}
//   jobs   {state?, limit?, cursor?} -> {"ok":true,"jobs":[{"job","state","progress","submitted","kind"}],"next"?}
//   watch  {job?}           -> {"ok":true,"watching":"<id>"|"all"}, then events on the connection
//   health                  -> {"ok":true,"version","uptime_s","queued","running","workers","queue"?}
//   cluster                 -> {"ok":true,"stream","workers":[...],"pending","lag","dead"}  (queue mode)
// Errors: {"ok":false,"error":{"code","message"}}.
//
// Thread contract: safe for concurrent use.
#pragma once

#include <chrono>
#include <functional>
#include <map>
#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <string_view>

#include "job_runner.h"
#include "job_store.h"

namespace godwit {

struct Reply {
  nlohmann::json response;
  bool watch = false;
  std::string watch_job;  // empty: all jobs
};

class Dispatcher {
 public:
  static constexpr size_t kMaxRequestDepth = 32;
  static constexpr size_t kMaxIdBytes = 256;
  static constexpr size_t kMaxJobsPage = 1000;  // jobs per `jobs` answer
  Dispatcher(JobStore& store, const JobRunner& runner, size_t workers);
  // Empty token: none required.
  void set_token(std::string token);
  // Queue mode: the cluster's state (task_queue.h), for `cluster` and `health`.
  void set_cluster_info(std::function<Result<nlohmann::json>()> info) { cluster_info_ = std::move(info); }
  // An op served by another module (the record's `airings`, `proof`):
  // request object in, response object (with "ok": true) or an error out.
  // Call before serving.
  using OpHandler = std::function<Result<nlohmann::json>(const nlohmann::json& request)>;
  void add_op(std::string name, OpHandler handler) { extra_ops_[std::move(name)] = std::move(handler); }
  Reply handle(std::string_view line) const;
  static nlohmann::json error_response(ErrorCode code, const std::string& message);

 private:
  Reply handle_op(const nlohmann::json& req) const;
  JobStore& store_;
  const JobRunner& runner_;
  size_t workers_;
  std::function<Result<nlohmann::json>()> cluster_info_;
  std::map<std::string, OpHandler> extra_ops_;
  std::chrono::steady_clock::time_point started_ = std::chrono::steady_clock::now();
  mutable std::mutex token_mu_;
  std::string token_;  // GUARDED_BY(token_mu_)
};

bool constant_time_equal(std::string_view a, std::string_view b);

}  // namespace godwit
