// WorkerPool: the threads that run jobs, never the I/O thread.
// Each worker takes the next queued job from the store, runs it through
// the JobRunner and records the outcome. drain() lets running jobs finish
// and starts no new ones (queued jobs stay in the journal for next time).
#pragma once

#include <functional>
#include <thread>
#include <vector>

#include "job_runner.h"
#include "job_store.h"

namespace godwit {

// How a job runs: on this machine (JobRunner::run) or through the queue.
using JobExecutor = std::function<Result<nlohmann::json>(
    const std::string& job_id, const nlohmann::json& spec, const std::function<void(double)>& progress,
    const std::function<bool()>& should_stop, const std::function<void(std::string_view)>& warn)>;

class WorkerPool {
 public:
  WorkerPool(JobStore& store, const JobRunner& runner, size_t workers, JobExecutor executor = nullptr);
  ~WorkerPool();
  void drain();  // returns when every worker has stopped

 private:
  void loop();
  JobStore& store_;
  const JobRunner& runner_;
  JobExecutor executor_;
  std::vector<std::thread> threads_;
};

}  // namespace godwit
