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
