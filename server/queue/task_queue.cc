#include "task_queue.h"
#include "json_text.h"
#include "wire_code.h"

#include <unistd.h>

#include <cmath>

namespace godwit {
namespace {

constexpr const char* kGroup = "workers";

Error malformed(const std::string& what) {
  return Error{ProtocolCode::unavailable, "unexpected reply from Redis to " + what, "", std::nullopt};
}

}  // namespace

std::string default_consumer_name() {
  char host[256] = "";
  if (gethostname(host, sizeof host - 1) != 0) host[0] = '\0';
  return std::string(host[0] ? host : "host") + ":" + std::to_string(getpid());
}

TaskQueue::TaskQueue(const QueueUrl& url, std::string consumer, const QueueOptions& options)
    : redis_(url.host, url.port), stream_(url.stream), consumer_(std::move(consumer)), options_(options) {}

Status TaskQueue::ensure_group() {
  auto r = redis_.command({"XGROUP", "CREATE", stream_, kGroup, "0", "MKSTREAM"});
  if (!r && r.error().message.find("BUSYGROUP") == std::string::npos) return r.error();
  return ok_status();
}

Status TaskQueue::enqueue(const std::string& job, const std::vector<PlannedTask>& tasks) {
  // Submitting again (a daemon restarted, a day grown by an hour) is a new
  // intent: an earlier cancel no longer applies.
  if (auto d = redis_.command({"DEL", key("cancel:" + job)}); !d) return d.error();
  for (const auto& t : tasks) {
    auto e = redis_.command({"EXISTS", key("result:" + t.id)});
    if (!e) return e.error();
    if (e.value().integer == 1) continue;
    auto r = redis_.command({"XADD", stream_, "*", "task", t.id, "job", job, "spec", json_text(t.spec), "attempt", "1"});
    if (!r) return r.error();
  }
  return ok_status();
}

Result<std::optional<QueuedTask>> TaskQueue::parse_entry(const RedisReply& entry, int attempt_override) {
  if (entry.type != RedisReply::Type::array || entry.elements.size() != 2) return std::optional<QueuedTask>{};
  QueuedTask t;
  t.entry = entry.elements[0].str;
  const auto& f = entry.elements[1].elements;
  for (size_t i = 0; i + 1 < f.size(); i += 2) {
    const std::string& k = f[i].str;
    const std::string& v = f[i + 1].str;
    if (k == "task") t.task = v;
    else if (k == "job") t.job = v;
    else if (k == "attempt") t.attempt = std::max(1, std::atoi(v.c_str()));
    else if (k == "spec") {
      t.spec = nlohmann::json::parse(v, nullptr, false);
    }
  }
  if (attempt_override > 0) t.attempt = std::max(t.attempt, attempt_override);
  if (t.task.empty() || t.job.empty() || t.spec.is_discarded() || !t.spec.is_object()) {
    // Not ours or damaged: acknowledge it away, so it cannot block the group.
    (void)redis_.command({"XACK", stream_, kGroup, t.entry});
    (void)redis_.command({"XADD", key("dead"), "*", "entry", t.entry, "task", t.task, "job", t.job, "reason",
                          "malformed task entry", "attempts", "0"});
    return std::optional<QueuedTask>{};
  }
  return std::optional<QueuedTask>{std::move(t)};
}

Result<int> TaskQueue::deliveries(const std::string& entry) {
  auto r = redis_.command({"XPENDING", stream_, kGroup, entry, entry, "1"});
  if (!r) return r.error();
  const auto& v = r.value();
  if (v.type != RedisReply::Type::array || v.elements.empty()) return 0;
  const auto& e = v.elements[0];
  if (e.elements.size() < 4) return malformed("XPENDING");
  return static_cast<int>(e.elements[3].integer);
}

Result<std::optional<QueuedTask>> TaskQueue::next(double block_s) {
  // Stalled tasks first: pending on a consumer that went quiet.
  const auto idle_ms = std::to_string(static_cast<long long>(std::llround(options_.claim_idle_s * 1000)));
  for (int round = 0; round < 16; ++round) {
    auto c = redis_.command({"XAUTOCLAIM", stream_, kGroup, consumer_, idle_ms, "0-0", "COUNT", "1"});
    if (!c) return c.error();
    const auto& v = c.value();
    if (v.type != RedisReply::Type::array || v.elements.size() < 2) return malformed("XAUTOCLAIM");
    if (v.elements[1].elements.empty()) break;
    const RedisReply& entry = v.elements[1].elements[0];
    auto n = deliveries(entry.elements.empty() ? "" : entry.elements[0].str);
    if (!n) return n.error();
    auto t = parse_entry(entry, 0);
    if (!t) return t.error();
    if (!t.value()) continue;
    QueuedTask task = std::move(*t.value());
    // Each delivery that did not end in an acknowledgement is a worker that
    // stopped while running it.
    const int died = n.value() - 1;
    task.attempt += died;
    if (task.attempt > options_.max_attempts) {
      if (auto st = fail(task, "its worker stopped before finishing it " + std::to_string(died) + " time(s)"); !st)
        return st.error();
      continue;
    }
    return std::optional<QueuedTask>{std::move(task)};
  }
  const auto block_ms = std::to_string(static_cast<long long>(std::llround(block_s * 1000)));
  auto r = redis_.command({"XREADGROUP", "GROUP", kGroup, consumer_, "COUNT", "1", "BLOCK", block_ms, "STREAMS", stream_, ">"},
                          block_s + 5);
  if (!r) return r.error();
  const auto& v = r.value();
  if (v.is_nil()) return std::optional<QueuedTask>{};
  if (v.type != RedisReply::Type::array || v.elements.empty() || v.elements[0].elements.size() < 2 ||
      v.elements[0].elements[1].elements.empty())
    return std::optional<QueuedTask>{};
  return parse_entry(v.elements[0].elements[1].elements[0], 0);
}

Status TaskQueue::complete(const QueuedTask& t, const nlohmann::json& result) {
  auto s = redis_.command({"SET", key("result:" + t.task), json_text(result), "NX"});
  if (!s) return s.error();
  auto a = redis_.command({"SADD", key("stored:" + t.job), t.task});
  if (!a) return a.error();
  return drop(t);
}

Status TaskQueue::fail(const QueuedTask& t, const std::string& reason) {
  if (t.attempt >= options_.max_attempts) {
    auto d = redis_.command({"XADD", key("dead"), "*", "task", t.task, "job", t.job, "reason", reason, "attempts",
                             std::to_string(t.attempt), "spec", json_text(t.spec)});
    if (!d) return d.error();
    auto h = redis_.command({"HSET", key("failed:" + t.job), t.task, reason});
    if (!h) return h.error();
  } else {
    auto r = redis_.command({"XADD", stream_, "*", "task", t.task, "job", t.job, "spec", json_text(t.spec), "attempt",
                             std::to_string(t.attempt + 1)});
    if (!r) return r.error();
  }
  return drop(t);
}

Status TaskQueue::drop(const QueuedTask& t) {
  auto a = redis_.command({"XACK", stream_, kGroup, t.entry});
  if (!a) return a.error();
  auto d = redis_.command({"XDEL", stream_, t.entry});
  if (!d) return d.error();
  return ok_status();
}

Result<size_t> TaskQueue::stored_count(const std::string& job, const std::vector<PlannedTask>& tasks) {
  if (tasks.empty()) return size_t{0};
  std::vector<std::string> argv{"SMISMEMBER", key("stored:" + job)};
  for (const auto& t : tasks) argv.push_back(t.id);
  auto r = redis_.command(argv);
  if (!r) return r.error();
  size_t n = 0;
  for (const auto& e : r.value().elements) n += e.integer == 1 ? 1 : 0;
  return n;
}

Result<std::optional<nlohmann::json>> TaskQueue::result(const std::string& task) {
  auto r = redis_.command({"GET", key("result:" + task)});
  if (!r) return r.error();
  if (r.value().is_nil()) return std::optional<nlohmann::json>{};
  auto j = nlohmann::json::parse(r.value().str, nullptr, false);
  if (j.is_discarded()) return malformed("GET of a task result");
  return std::optional<nlohmann::json>{std::move(j)};
}

Result<std::vector<std::pair<std::string, std::string>>> TaskQueue::failures(const std::string& job) {
  auto r = redis_.command({"HGETALL", key("failed:" + job)});
  if (!r) return r.error();
  std::vector<std::pair<std::string, std::string>> out;
  const auto& e = r.value().elements;
  for (size_t i = 0; i + 1 < e.size(); i += 2) out.emplace_back(e[i].str, e[i + 1].str);
  return out;
}

Status TaskQueue::cancel(const std::string& job) {
  auto r = redis_.command({"SET", key("cancel:" + job), "1", "EX", "604800"});
  if (!r) return r.error();
  return ok_status();
}

Result<bool> TaskQueue::cancelled(const std::string& job) {
  auto r = redis_.command({"EXISTS", key("cancel:" + job)});
  if (!r) return r.error();
  return r.value().integer == 1;
}

Status TaskQueue::forget(const std::string& job, const std::vector<PlannedTask>& tasks) {
  std::vector<std::string> argv{"DEL", key("stored:" + job), key("failed:" + job)};
  for (const auto& t : tasks) argv.push_back(key("result:" + t.id));
  auto r = redis_.command(argv);
  if (!r) return r.error();
  return ok_status();
}

Status TaskQueue::keep(const std::string& consumer, const std::string& entry) {
  // Only while `consumer` holds it: XPENDING for that entry and consumer.
  auto p = redis_.command({"XPENDING", stream_, kGroup, entry, entry, "1", consumer});
  if (!p) return p.error();
  if (p.value().type != RedisReply::Type::array || p.value().elements.empty()) return ok_status();
  auto c = redis_.command({"XCLAIM", stream_, kGroup, consumer, "0", entry, "JUSTID"});
  if (!c) return c.error();
  return ok_status();
}

Status TaskQueue::heartbeat(const nlohmann::json& state) {
  nlohmann::json s = state;
  s["worker"] = consumer_;
  const auto ttl = std::to_string(static_cast<long long>(std::ceil(3 * options_.heartbeat_s)));
  auto r = redis_.command({"SET", key("worker:" + consumer_), json_text(s), "EX", ttl});
  if (!r) return r.error();
  return ok_status();
}

Result<nlohmann::json> TaskQueue::cluster() {
  nlohmann::json out{{"stream", stream_}, {"workers", nlohmann::json::array()}};
  std::string cursor = "0";
  do {
    auto r = redis_.command({"SCAN", cursor, "MATCH", key("worker:*"), "COUNT", "100"});
    if (!r) return r.error();
    if (r.value().elements.size() != 2) return malformed("SCAN");
    cursor = r.value().elements[0].str;
    for (const auto& k : r.value().elements[1].elements) {
      auto g = redis_.command({"GET", k.str});
      if (!g) return g.error();
      if (g.value().is_nil()) continue;
      auto j = nlohmann::json::parse(g.value().str, nullptr, false);
      if (!j.is_discarded()) out["workers"].push_back(j);
    }
  } while (cursor != "0");
  size_t pending = 0, lag = 0;
  auto g = redis_.command({"XINFO", "GROUPS", stream_});
  if (g) {
    for (const auto& grp : g.value().elements) {
      bool ours = false;
      for (size_t i = 0; i + 1 < grp.elements.size(); i += 2)
        if (grp.elements[i].str == "name" && grp.elements[i + 1].str == kGroup) ours = true;
      if (!ours) continue;
      for (size_t i = 0; i + 1 < grp.elements.size(); i += 2) {
        if (grp.elements[i].str == "pending") pending = static_cast<size_t>(grp.elements[i + 1].integer);
        if (grp.elements[i].str == "lag" && grp.elements[i + 1].type == RedisReply::Type::integer)
          lag = static_cast<size_t>(grp.elements[i + 1].integer);
      }
    }
  }
  out["pending"] = pending;  // read by a worker, not yet acknowledged
  out["lag"] = lag;          // in the stream, not yet read by any worker
  auto d = redis_.command({"XLEN", key("dead")});
  out["dead"] = d ? d.value().integer : 0;
  return out;
}

}  // namespace godwit
