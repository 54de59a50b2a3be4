// QueueWorker: this daemon's share of the cluster's tasks (task_queue.h).
//
// `threads` loops each take a task (a stalled one first), run it through
// the JobRunner, store the result and acknowledge it; a failed run is
// retried elsewhere or dead-lettered by the queue. A task of a cancelled
// job is acknowledged without running. When Redis is unreachable the loops
// retry every second; nothing is lost (an unacknowledged task stays
// pending). A heartbeat thread publishes this worker's state.
//
// Thread contract: start() and stop() from one thread; state() from any.
#pragma once

#include <atomic>
#include <functional>
#include <mutex>
#include <nlohmann/json.hpp>
#include <string>
#include <thread>
#include <vector>

#include "job_runner.h"
#include "task_queue.h"

namespace godwit {

class QueueWorker {
 public:
  QueueWorker(QueueUrl url, QueueOptions options, const JobRunner& runner, size_t threads, std::string name);
  ~QueueWorker();
  void start();
  // Finishes the running tasks' current block and returns their tasks to
  // the queue (not counted as failures); joins the threads.
  void stop();
  nlohmann::json state() const;

 private:
  void loop(size_t slot);
  void heartbeat_loop();

  QueueUrl url_;
  QueueOptions options_;
  const JobRunner& runner_;
  size_t threads_n_;
  std::string name_;
  std::atomic<bool> stop_{false};
  std::vector<std::thread> threads_;
  mutable std::mutex mu_;
  std::vector<std::string> running_;  // GUARDED_BY(mu_): task id per slot ("" idle)
  std::vector<std::string> entries_;  // GUARDED_BY(mu_): its stream entry per slot ("" idle)
  size_t done_ = 0, failed_ = 0;      // GUARDED_BY(mu_)
};

}  // namespace godwit
