#include "worker_pool.h"

#include <spdlog/spdlog.h>

#include <cstdlib>
#include <stdexcept>

#include "error_boundary.h"
#include "job_priority.h"
#include "thread_entry.h"
#include "wire_code.h"

namespace godwit {
namespace {

// Fault injection for the tests of the error boundary (DEVELOPERS.md, Test):
// GODWIT_FAULT in godwitd's environment makes every job's worker throw a
// std::exception (job_throw), something else (job_throw_other) or abort the
// process (job_abort). Unset (always, in production) it does nothing.
enum class Fault { none, job_throw, job_throw_other, job_abort };

Fault fault_from_environment() {
  const char* v = std::getenv("GODWIT_FAULT");
  const std::string f = v ? v : "";
  if (f == "job_throw") return Fault::job_throw;
  if (f == "job_throw_other") return Fault::job_throw_other;
  if (f == "job_abort") return Fault::job_abort;
  return Fault::none;
}

void inject(Fault f) {
  switch (f) {
    case Fault::none: return;
    case Fault::job_throw: throw std::runtime_error("fault injected by GODWIT_FAULT=job_throw");
    case Fault::job_throw_other: throw 42;
    case Fault::job_abort: std::abort();
  }
}

}  // namespace

WorkerPool::WorkerPool(JobStore& store, const JobRunner& runner, size_t workers, JobExecutor executor)
    : store_(store), runner_(runner), executor_(std::move(executor)) {
  if (!executor_) executor_ = local_executor(runner_);
  for (size_t i = 0; i < std::max<size_t>(1, workers); ++i)
    threads_.emplace_back([this, i] { thread_entry("job worker " + std::to_string(i), [this] { loop(); }); });
}

WorkerPool::~WorkerPool() { drain(); }

void WorkerPool::drain() {
  store_.stop();
  for (auto& t : threads_)
    if (t.joinable()) t.join();
}

void WorkerPool::loop() {
  if (!lower_this_thread_priority(runner_.config().job_nice, runner_.config().idle_class))
    spdlog::warn("cannot lower the priority of a job thread; jobs compete with requests");
  const Fault fault = fault_from_environment();
  while (auto job = store_.take()) {
    const std::string id = job->id;
    spdlog::info("job {} started ({})", id, job->spec.value("kind", ""));
    // A reconcile job's page and excerpts, served by `files` and `file`.
    ReportFiles files;
    files.dir = store_.files_dir(id);
    files.excerpts = runner_.config().excerpts;
    // The job's error boundary: whatever it throws fails it with `internal`
    // and the daemon carries on.
    Result<nlohmann::json> result = guarded("", [&]() -> Result<nlohmann::json> {
      inject(fault);
      return executor_(
          id, job->spec, [&](double f) { store_.set_progress(id, f); }, [&] { return store_.cancel_requested(id); },
          [&](std::string_view w) { spdlog::warn("job {}: {}", id, w); }, &files);
    });
    // Recording the outcome is guarded too: a result that cannot be
    // recorded (it throws) fails the job instead.
    const Status recorded = guarded("job " + id, [&]() -> Status {
      if (result) {
        store_.finish(id, result.value());
        spdlog::info("job {} done", id);
      } else if (result.error().code == ErrorCode::cancelled) {
        store_.mark_cancelled(id);
        spdlog::info("job {} cancelled", id);
      } else {
        store_.fail(id, wire_error_to_json(result.error()));
        spdlog::warn("job {} failed: {}", id, result.error().describe());
      }
      return ok_status();
    });
    if (!recorded) {
      spdlog::error("{}", recorded.error().message);
      store_.fail(id, {{"code", std::string(wire_code_name(ErrorCode::internal))}, {"message", recorded.error().message}});
    }
  }
}

}  // namespace godwit
