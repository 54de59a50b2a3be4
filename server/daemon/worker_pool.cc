#include "worker_pool.h"

#include <spdlog/spdlog.h>

#include "godwit/report/locate_report.h"
#include "job_priority.h"

namespace godwit {

WorkerPool::WorkerPool(JobStore& store, const JobRunner& runner, size_t workers, JobExecutor executor)
    : store_(store), runner_(runner), executor_(std::move(executor)) {
  if (!executor_) executor_ = local_executor(runner_);
  for (size_t i = 0; i < std::max<size_t>(1, workers); ++i) threads_.emplace_back([this] { loop(); });
}

WorkerPool::~WorkerPool() { drain(); }

void WorkerPool::drain() {
  store_.stop();
  for (auto& t : threads_)
    if (t.joinable()) t.join();
}

void WorkerPool::loop() {
  if (!lower_this_thread_priority(runner_.config().job_nice))
    spdlog::warn("cannot lower the priority of a job thread; jobs compete with requests");
  while (auto job = store_.take()) {
    const std::string id = job->id;
    spdlog::info("job {} started ({})", id, job->spec.value("kind", ""));
    Result<nlohmann::json> result = Error{ErrorCode::internal, "not run", "", std::nullopt};
    // A reconcile job's page and excerpts, served by `files` and `file`.
    ReportFiles files;
    files.dir = store_.files_dir(id);
    files.excerpts = runner_.config().excerpts;
    try {
      result = executor_(
          id, job->spec, [&](double f) { store_.set_progress(id, f); }, [&] { return store_.cancel_requested(id); },
          [&](std::string_view w) { spdlog::warn("job {}: {}", id, w); }, &files);
    } catch (const std::exception& e) {  // a bug: this job fails, the daemon carries on
      result = Error{ErrorCode::internal, std::string("internal error (please report it): ") + e.what(), "",
                     std::nullopt};
    }
    if (result) {
      store_.finish(id, result.value());
      spdlog::info("job {} done", id);
    } else if (result.error().code == ErrorCode::cancelled) {
      store_.mark_cancelled(id);
      spdlog::info("job {} cancelled", id);
    } else {
      store_.fail(id, error_to_json(result.error()));
      spdlog::warn("job {} failed: {}", id, result.error().describe());
    }
  }
}

}  // namespace godwit
