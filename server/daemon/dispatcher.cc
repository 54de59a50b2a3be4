#include "dispatcher.h"

#include <algorithm>

#include "base64.h"
#include "godwit/core/version.h"
#include "wire_code.h"

namespace godwit {
namespace {

// Deepest nesting of arrays and objects in the JSON text `line` (brackets
// inside strings do not count), or `limit` + 1 as soon as it goes deeper:
// checked before parsing, because copying, dumping or comparing a deeply
// nested value recurses once per level and would overflow the stack.
size_t nesting_depth(std::string_view line, size_t limit) {
  size_t depth = 0, deepest = 0;
  bool in_string = false, escaped = false;
  for (const char ch : line) {
    if (in_string) {
      if (escaped) escaped = false;
      else if (ch == '\\') escaped = true;
      else if (ch == '"') in_string = false;
      continue;
    }
    if (ch == '"') {
      in_string = true;
    } else if (ch == '[' || ch == '{') {
      deepest = std::max(deepest, ++depth);
      if (deepest > limit) return deepest;
    } else if ((ch == ']' || ch == '}') && depth > 0) {
      --depth;
    }
  }
  return deepest;
}

}  // namespace

bool constant_time_equal(std::string_view a, std::string_view b) {
  // Length is not secret; the contents are compared without early exit.
  unsigned char diff = a.size() == b.size() ? 0 : 1;
  const size_t n = std::max(a.size(), b.size());
  for (size_t i = 0; i < n; ++i) {
    const unsigned char x = i < a.size() ? static_cast<unsigned char>(a[i]) : 0;
    const unsigned char y = i < b.size() ? static_cast<unsigned char>(b[i]) : 0;
    diff |= static_cast<unsigned char>(x ^ y);
  }
  return diff == 0;
}

Dispatcher::Dispatcher(JobStore& store, const JobRunner& runner, size_t workers)
    : store_(store), runner_(runner), workers_(workers) {}

void Dispatcher::set_token(std::string token) {
  std::lock_guard lock(token_mu_);
  token_ = std::move(token);
}

nlohmann::json Dispatcher::error_response(ErrorCode code, const std::string& message) {
  return {{"ok", false}, {"error", {{"code", std::string(wire_code_name(code))}, {"message", message}}}};
}

Reply Dispatcher::handle(std::string_view line) const {
  if (nesting_depth(line, kMaxRequestDepth) > kMaxRequestDepth)
    return {error_response(ProtocolCode::bad_request,
                           "a request nests arrays and objects over " + std::to_string(kMaxRequestDepth) + " deep"),
            false, {}};
  nlohmann::json req;
  try {
    req = nlohmann::json::parse(line);
  } catch (const std::exception&) {
    return {error_response(ProtocolCode::bad_request, "not a JSON object on one line"), false, {}};
  }
  if (!req.is_object()) return {error_response(ProtocolCode::bad_request, "a request is a JSON object"), false, {}};
  if (const auto id = req.find("id"); id != req.end()) {
    const bool fits = id->is_number() || (id->is_string() && id->get_ref<const std::string&>().size() <= kMaxIdBytes);
    if (!fits)
      return {error_response(ProtocolCode::bad_request,
                             "'id' must be a number or a string of at most " + std::to_string(kMaxIdBytes) + " bytes"),
              false, {}};
  }
  Reply r;
  {
    std::string token;
    {
      std::lock_guard lock(token_mu_);
      token = token_;
    }
    const auto it = req.find("token");
    const std::string given = it != req.end() && it->is_string() ? it->get<std::string>() : std::string();
    if (!token.empty() && !constant_time_equal(given, token)) {
      r.response = error_response(ProtocolCode::forbidden, "missing or wrong token");
    } else {
      try {
        r = handle_op(req);
      } catch (const std::exception& e) {
        r.response = error_response(ProtocolCode::bad_request, std::string("bad request: ") + e.what());
      }
    }
  }
  if (req.contains("id")) r.response["id"] = req["id"];
  return r;
}

Reply Dispatcher::handle_op(const nlohmann::json& req) const {
  const auto op_it = req.find("op");
  if (op_it == req.end() || !op_it->is_string()) return {error_response(ProtocolCode::bad_request, "'op' is required"), false, {}};
  const std::string op = *op_it;
  auto job_id = [&]() -> std::optional<std::string> {
    auto it = req.find("job");
    if (it == req.end() || !it->is_string()) return std::nullopt;
    return it->get<std::string>();
  };
  auto need_job = [&](std::optional<JobInfo>& info) -> std::optional<nlohmann::json> {
    auto id = job_id();
    if (!id) return error_response(ProtocolCode::bad_request, "'job' (a job id string) is required");
    info = store_.get(*id);
    if (!info) return error_response(ProtocolCode::unknown_job, "no job " + *id);
    return std::nullopt;
  };
  if (op == "submit") {
    auto it = req.find("job");
    if (it == req.end()) return {error_response(ProtocolCode::bad_request, "'job' is required"), false, {}};
    auto spec = runner_.prepare(*it);
    if (!spec) return {error_response(spec.error().code, spec.error().describe()), false, {}};
    auto id = store_.submit(spec.value());
    if (!id) {
      runner_.discard(spec.value());
      return {error_response(id.error().code, id.error().message), false, {}};
    }
    return {{{"ok", true}, {"job", id.value()}}, false, {}};
  }
  if (op == "status") {
    std::optional<JobInfo> info;
    if (auto e = need_job(info)) return {*e, false, {}};
    nlohmann::json r{{"ok", true}, {"job", info->id}, {"state", job_state_name(info->state)}, {"progress", info->progress}};
    if (!info->error.is_null()) r["error"] = info->error;
    return {r, false, {}};
  }
  if (op == "result") {
    std::optional<JobInfo> info;
    if (auto e = need_job(info)) return {*e, false, {}};
    if (info->state != JobState::done)
      return {error_response(ProtocolCode::unknown_job, "job " + info->id + " is " + job_state_name(info->state) +
                                                           ", no result"), false, {}};
    auto text = store_.result_text(info->id);
    if (!text) return {error_response(ErrorCode::io, "result file missing"), false, {}};
    return {{{"ok", true}, {"job", info->id}, {"result", nlohmann::json::parse(*text)}}, false, {}};
  }
  if (op == "files" || op == "file") {
    // A finished job's report files (a reconcile job's page and excerpts):
    // `files` lists them, `file` gives one, base64-encoded.
    std::optional<JobInfo> info;
    if (auto e = need_job(info)) return {*e, false, {}};
    if (info->state != JobState::done)
      return {error_response(ProtocolCode::unknown_job, "job " + info->id + " is " + job_state_name(info->state) +
                                                           ", no files"), false, {}};
    if (op == "files") {
      nlohmann::json list = nlohmann::json::array();
      for (const auto& f : store_.list_files(info->id)) list.push_back({{"name", f.name}, {"bytes", f.bytes}});
      return {{{"ok", true}, {"job", info->id}, {"files", list}}, false, {}};
    }
    const auto name = req.find("name");
    if (name == req.end() || !name->is_string())
      return {error_response(ProtocolCode::bad_request, "'name' (a name from \"files\") is required"), false, {}};
    auto bytes = store_.read_file(info->id, name->get<std::string>());
    if (!bytes)
      return {error_response(ErrorCode::not_found, "job " + info->id + " has no file " + name->get<std::string>()), false, {}};
    return {{{"ok", true}, {"job", info->id}, {"name", *name}, {"bytes", bytes->size()}, {"base64", base64_encode(*bytes)}},
            false, {}};
  }
  if (op == "cancel") {
    std::optional<JobInfo> info;
    if (auto e = need_job(info)) return {*e, false, {}};
    const bool ok = store_.cancel(info->id);
    if (!ok) return {error_response(ErrorCode::usage, "job " + info->id + " is already " + job_state_name(info->state)), false, {}};
    return {{{"ok", true}, {"job", info->id}, {"cancelled", true}}, false, {}};
  }
  if (op == "jobs") {
    std::optional<JobState> filter;
    if (req.contains("state")) {
      filter = req["state"].is_string() ? job_state_from(req["state"]) : std::nullopt;
      if (!filter) return {error_response(ProtocolCode::bad_request, "'state' must be queued, running, done, failed or cancelled"), false, {}};
    }
    // Paged: at most `limit` jobs (default and maximum kMaxJobsPage) after
    // the `cursor` of the previous page; "next" is there when more remain.
    size_t limit = kMaxJobsPage;
    if (req.contains("limit")) {
      const auto& l = req["limit"];
      if (!l.is_number_integer() || l.get<int64_t>() < 1 || l.get<int64_t>() > int64_t(kMaxJobsPage))
        return {error_response(ProtocolCode::bad_request,
                               "'limit' must be an integer from 1 to " + std::to_string(kMaxJobsPage)), false, {}};
      limit = l.get<size_t>();
    }
    std::string cursor;
    if (req.contains("cursor")) {
      if (!req["cursor"].is_string()) return {error_response(ProtocolCode::bad_request, "'cursor' must be a string"), false, {}};
      cursor = req["cursor"].get<std::string>();
    }
    auto key = [](const JobInfo& j) { return j.submitted + "/" + j.id; };  // the order of list()
    nlohmann::json list = nlohmann::json::array();
    std::string last;
    bool more = false;
    for (const auto& j : store_.list(filter)) {
      if (!cursor.empty() && key(j) <= cursor) continue;
      if (list.size() == limit) {
        more = true;
        break;
      }
      list.push_back({{"job", j.id}, {"state", job_state_name(j.state)}, {"progress", j.progress},
                      {"submitted", j.submitted}, {"kind", j.spec.value("kind", "")}});
      last = key(j);
    }
    nlohmann::json r{{"ok", true}, {"jobs", list}};
    if (more) r["next"] = last;
    return {r, false, {}};
  }
  if (op == "watch") {
    auto id = job_id();
    if (id && !store_.get(*id)) return {error_response(ProtocolCode::unknown_job, "no job " + *id), false, {}};
    return {{{"ok", true}, {"watching", id ? *id : "all"}}, true, id ? *id : ""};
  }
  if (op == "health") {
    const double up = std::chrono::duration<double>(std::chrono::steady_clock::now() - started_).count();
    nlohmann::json h{{"ok", true},
                     {"version", godwit_version()},
                     {"uptime_s", std::round(up * 1000) / 1000},
                     {"queued", store_.queued()},
                     {"running", store_.running()},
                     {"workers", workers_}};
    if (cluster_info_) {
      auto c = cluster_info_();
      h["queue"] = c ? nlohmann::json{{"reachable", true},
                                      {"workers", c.value()["workers"].size()},
                                      {"pending", c.value()["pending"]},
                                      {"lag", c.value()["lag"]},
                                      {"dead", c.value()["dead"]}}
                     : nlohmann::json{{"reachable", false}, {"error", c.error().message}};
    }
    return {h, false, {}};
  }
  if (op == "cluster") {
    if (!cluster_info_) return {error_response(ProtocolCode::bad_request, "this daemon is not in queue mode"), false, {}};
    auto c = cluster_info_();
    if (!c) return {error_response(c.error().code, c.error().message), false, {}};
    nlohmann::json r = c.value();
    r["ok"] = true;
    return {r, false, {}};
  }
  if (auto extra = extra_ops_.find(op); extra != extra_ops_.end()) {
    auto r = extra->second(req);
    if (!r) return {error_response(r.error().code, r.error().message), false, {}};
    return {r.value(), false, {}};
  }
  return {error_response(ProtocolCode::bad_request, "unknown op '" + op + "'"), false, {}};
}

}  // namespace godwit
