// TaskQueue: the tasks of distributed jobs on a Redis stream with a
// consumer group, shared by every godwitd in queue mode.
//
// Keys, all under the stream's name S:
//   S                  stream of tasks: {task, job, spec, attempt}
//   group "workers"    on S; each daemon reads as consumer "<host>:<pid>"
//   S:dead             dead-letter stream: {task, job, reason, attempts}
//   S:result:<task>    the task's result (JSON), written once (SET NX)
//   S:stored:<job>     set of the job's stored task ids (progress)
//   S:failed:<job>     hash task id -> reason, for dead-lettered tasks
//   S:cancel:<job>     present when the job was cancelled
//   S:worker:<name>    heartbeat (JSON), expires after 3 heartbeats
//
// Delivery is at least once: a task read and not acknowledged (its worker
// died) stays pending and is reclaimed by another worker once idle for
// `claim_idle_s` (XAUTOCLAIM; while the worker running it lives, its
// heartbeat thread keeps it from going idle, keep()); a task is acknowledged only after its
// result is stored, and storing twice keeps the first. A task that failed,
// or whose workers died, `max_attempts` times goes to S:dead.
//
// Thread contract: one per thread (each holds its own connection).
#pragma once

#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <vector>

#include "redis_connection.h"
#include "task_plan.h"

namespace godwit {

struct QueueOptions {
  double claim_idle_s = 30;  // a pending task idle this long is reclaimed. Default: 30 s
  int max_attempts = 3;      // then it is dead-lettered. Default: 3
  double heartbeat_s = 5;
};

struct QueuedTask {
  std::string entry;  // stream entry id
  std::string task, job;
  nlohmann::json spec;
  int attempt = 1;      // 1 for the first run
};

class TaskQueue {
 public:
  TaskQueue(const QueueUrl& url, std::string consumer, const QueueOptions& options);

  // Creates the stream and group when missing (idempotent).
  Status ensure_group();
  // Adds the tasks not stored yet, and lifts a cancel of the job. Harmless
  // when repeated.
  Status enqueue(const std::string& job, const std::vector<PlannedTask>& tasks);
  // A stalled task first, else a new one, waiting up to `block_s`.
  Result<std::optional<QueuedTask>> next(double block_s);
  // Stores the result (first one wins), then acknowledges.
  Status complete(const QueuedTask& t, const nlohmann::json& result);
  // A failed run: retried as a new entry, or dead-lettered after
  // max_attempts; acknowledged either way.
  Status fail(const QueuedTask& t, const std::string& reason);
  // Acknowledges without running (its job was cancelled).
  Status drop(const QueuedTask& t);

  // How many of `tasks` (the job's plan) are stored.
  Result<size_t> stored_count(const std::string& job, const std::vector<PlannedTask>& tasks);
  Result<std::optional<nlohmann::json>> result(const std::string& task);
  Result<std::vector<std::pair<std::string, std::string>>> failures(const std::string& job);
  Status cancel(const std::string& job);
  Result<bool> cancelled(const std::string& job);
  // Deletes the job's task results and bookkeeping (after its merge).
  Status forget(const std::string& job, const std::vector<PlannedTask>& tasks);

  Status heartbeat(const nlohmann::json& state);
  // Resets the idle time of `entry`, pending on `consumer` (XCLAIM ... 0
  // JUSTID), while that consumer still holds it; an entry another consumer
  // has reclaimed meanwhile is left to it.
  Status keep(const std::string& consumer, const std::string& entry);
  // {"workers": [heartbeat...], "pending": N, "lag": N, "dead": N, "stream": S}
  Result<nlohmann::json> cluster();

  const std::string& consumer() const { return consumer_; }

 private:
  Result<std::optional<QueuedTask>> parse_entry(const RedisReply& entry, int attempt);
  Result<int> deliveries(const std::string& entry);
  std::string key(const std::string& suffix) const { return stream_ + ":" + suffix; }

  RedisConnection redis_;
  std::string stream_;
  std::string consumer_;
  QueueOptions options_;
};

// "<hostname>:<pid>", the consumer name of this process.
std::string default_consumer_name();

}  // namespace godwit
