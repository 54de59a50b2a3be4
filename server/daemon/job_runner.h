// JobRunner: turns a request's job object into an engine run.
//
// prepare() checks and normalizes a submitted job before it is journaled:
// kind, fields and types, every path resolved under the roots
// (path_guard.h), inline spots decoded and saved under the state folder,
// the library expanded, and the limits (templates per job, recording length
// per job). run() executes a prepared job and returns the same document as
// `godwit locate --format json` (or the reconcile JSON).
//
// Job object:
//   {"kind": "locate", "templates": [paths], "library": "DIR", "recordings": [paths],
//    "threshold": 0.3, "floor_k": 10, "fft_size": 0,
//    "inline": [{"id": "spot-a", "format": "wav", "audio_base64": "..."}]}
//   {"kind": "reconcile", "library": "DIR", "schedule": "FILE.csv", "recordings": [paths], "window_s": 60,
//    "time_zone": "Europe/Berlin", "station": "kestrel-fm", "excerpts": true}
//   (time_zone: optional; the station's, else the daemon's, when absent. station: optional, a
//   configured one, whose library serves when the job names none, and under which the store
//   of record files the job)
// prepare() gives a LocateSpec or ReconcileSpec (job_spec.h) as JSON; run()
// parses a prepared job once (job_spec_from_json) and runs the type. From
// the queue only (never prepared): a SegmentSpec, one task of a distributed
// job, whose result is a locate document with exact numbers (task_plan.h).
//
// Thread contract: safe for concurrent use (run() from several workers).
#pragma once

#include <functional>
#include <mutex>
#include <nlohmann/json.hpp>
#include <string>

#include "godwit/core/error.h"
#include "godwit/search/fft_size_chooser.h"
#include "godwit/compliance/reconcile_job.h"
#include "job_spec.h"
#include "path_guard.h"
#include "report_files.h"
#include "station_config.h"

namespace godwit {

struct RunnerConfig {
  std::string default_library;   // used when a locate job names no templates
  std::string inline_dir;        // where inline spots are saved
  size_t max_templates = 500;    // per job (also the most paths or inline spots a job may list)
  size_t max_recordings = 1000;  // per job, checked before any is opened
  double max_recording_s = 7 * 24 * 3600.0;  // per job, all recordings together
  size_t max_inline_bytes = 16u << 20;       // decoded, per spot
  std::string time_zone;  // the station's IANA zone for reconcile jobs that give none; empty: none
  // The configured stations with names (effective_stations), which a
  // reconcile job may name.
  std::vector<StationConfig> stations;
  int threads_per_job = 1;
  int job_nice = 10;  // threads that run jobs lower their priority by this (job_priority.h)
  bool idle_class = false;  // and run in Linux's idle class (job_priority.h)
  Planner planner = Planner::measure;
  FftCostTable costs;  // the cache's, at start
  // Reconcile jobs write excerpts beside their page (a job may say
  // "excerpts": false). Default: true.
  bool excerpts = true;
  // Called with each finished reconciliation, after its report files (the
  // store of record, record_ops.h), with the daemon's job id (empty when
  // unknown); an error fails the job. Empty: none.
  std::function<Status(const ReconcileResult&, const ReconcileOptions&, const nlohmann::json& prepared,
                       const std::string& job_id)>
      on_reconciled;
};

class JobRunner {
 public:
  JobRunner(RunnerConfig config, const PathGuard& guard)
      : config_(std::move(config)), guard_(guard), costs_(config_.costs) {}

  // A refused job leaves no inline spots behind.
  Result<nlohmann::json> prepare(const nlohmann::json& job) const;
  // Removes the inline spots a prepared job saved, when it is not run after
  // all (the queue was full, the journal could not be written).
  void discard(const nlohmann::json& prepared) const;
  // For a reconcile job, `report` (when given) says where its HTML page and
  // excerpts go (report_files.h; its log_name is the job's), and the JSON
  // names the excerpts; a job with "excerpts": false makes none.
  Result<nlohmann::json> run(const nlohmann::json& prepared, const std::function<void(double)>& progress,
                             const std::function<bool()>& should_stop,
                             const std::function<void(std::string_view)>& warn, const ReportFiles* report = nullptr,
                             const std::string& job_id = {}) const;
  Result<nlohmann::json> run(const JobSpec& spec, const std::function<void(double)>& progress,
                             const std::function<bool()>& should_stop,
                             const std::function<void(std::string_view)>& warn, const ReportFiles* report = nullptr,
                             const std::string& job_id = {}) const;
  // A finished reconcile job's documents: its report files written as
  // `report` says (when given), and the JSON. Errors: io, cancelled.
  Result<nlohmann::json> reconcile_documents(const ReconcileResult& result, const ReconcileSpec& spec,
                                             const ReconcileOptions& options, const std::string& title,
                                             const ReportFiles* report, const std::function<bool()>& should_stop,
                                             const std::function<void(std::string_view)>& warn,
                                             const std::string& job_id = {}) const;
  const RunnerConfig& config() const { return config_; }
  // A library's masters (library_scan.h), each of which must resolve under
  // a root (a symlink in the library may lead anywhere), else forbidden.
  Result<std::vector<std::string>> library_files(const std::string& dir) const;
  // The FFT costs measured so far, by every job (for the cache at exit).
  FftCostTable costs() const;

  // A prepared reconcile job's inputs and options, loaded (the library
  // scanned, the planned log read; its warnings go to `warn`).
  struct Reconcile {
    ReconcileJob job;
    ReconcileOptions options;  // its search's FFT cost table is not set
    std::string title;         // of the HTML report
  };
  Result<Reconcile> load_reconcile(const ReconcileSpec& spec, const std::function<void(std::string_view)>& warn) const;
  // A locate job's search options: the daemon's (threads, planner) and the
  // job's (threshold, floor, speed range); no FFT cost table, no callbacks
  // but `warn`.
  LocateOptions locate_options(const SearchFields& search, const std::function<void(std::string_view)>& warn) const;

 private:
  // `inline_dir` receives the folder made for inline spots, if any.
  Result<nlohmann::json> prepare_job(const nlohmann::json& job, std::string& inline_dir) const;
  RunnerConfig config_;
  const PathGuard& guard_;
  // Shared by the jobs: each runs on a copy and adds what it measured, so
  // FFT sizes are measured once per daemon, not once per job or task.
  mutable std::mutex costs_mu_;
  mutable FftCostTable costs_;  // GUARDED_BY(costs_mu_)
};

// How a prepared job runs: on this machine (JobRunner::run; the default
// where one is empty) or through the queue (distributed_jobs.h).
// `report`, when given, is where a reconcile job's page and excerpts go.
using JobExecutor = std::function<Result<nlohmann::json>(
    const std::string& job_id, const nlohmann::json& spec, const std::function<void(double)>& progress,
    const std::function<bool()>& should_stop, const std::function<void(std::string_view)>& warn,
    const ReportFiles* report)>;

// The executor that runs jobs here, with `runner` (which must outlive it).
JobExecutor local_executor(const JobRunner& runner);

}  // namespace godwit
