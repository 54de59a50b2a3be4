// Options every engine-running subcommand shares (locate, reconcile):
// the search fields of the job (job_spec.h's SearchFields, with the
// daemon's ranges and defaults), rates, threads, FFT planning and its
// cache, progress.
#pragma once

#include <CLI/CLI.hpp>
#include <memory>
#include <string>

#include "cache_dir.h"
#include "job_spec.h"
#include "godwit/search/job.h"
#include "progress_bar.h"

namespace godwit {

// The flags of a job's search land in `search`, the daemon's SearchFields
// (job_spec.h), with its ranges and defaults; the others set how this
// process runs the engine.
struct EngineArgs {
  SearchFields search;  // --threshold, --floor-k, --fft-size, --max-speed-change, --max-tempo-change
  double rate_hz = 8000;
  int channel = -1;
  bool progress = false;
  bool no_progress = false;
  bool quiet = false;
  int threads = 0;
  std::string planner = "measure";
  size_t memory_mb = 288;
  std::string cache_dir = default_cache_dir();
  bool no_refine = false;
  bool no_speed_search = false;
};

void add_engine_options(CLI::App* cmd, EngineArgs& a);
// A flag's check for a job field's range (job_spec.h).
CLI::Range cli_range(NumberRange r);

// Turns the arguments into LocateOptions, and owns what those point to
// (the FFT cache and its cost table, the progress bar, the interrupt flag).
// Keep it alive while the job runs; call finish() after.
class EngineSetup {
 public:
  // `search`: the job's search fields (its spec's, checked by
  // check_job_spec), applied as the daemon applies them
  // (SearchFields::apply); the rest from `a`.
  void configure(const EngineArgs& a, const SearchFields& search, LocateOptions& o);
  void finish();

 private:
  std::unique_ptr<FftCache> cache_;
  FftCostTable costs_;
  std::unique_ptr<ProgressBar> bar_;
};

void warn(std::string_view s);

}  // namespace godwit
