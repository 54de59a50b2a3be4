// Options every engine-running subcommand shares (locate, reconcile):
// thresholds, rates, threads, FFT planning and its cache, progress.
#pragma once

#include "godwit/search/peak_picker.h"

#include <CLI/CLI.hpp>
#include <memory>
#include <string>

#include "cache_dir.h"
#include "job_spec.h"
#include "godwit/search/job.h"
#include "progress_bar.h"

namespace godwit {

struct EngineArgs {
  double threshold = PickerOptions{}.threshold;
  double floor_k = 10;
  double rate_hz = 8000;
  int channel = -1;
  bool progress = false;
  bool no_progress = false;
  bool quiet = false;
  int threads = 0;
  size_t fft_size = 0;
  std::string planner = "measure";
  size_t memory_mb = 288;
  std::string cache_dir = default_cache_dir();
  bool no_refine = false;
  double max_speed_change_pct = kDefaultMaxSpeedChangePct;
  bool no_speed_search = false;
  double max_tempo_change_pct = 5;
};

void add_engine_options(CLI::App* cmd, EngineArgs& a);

// Turns the arguments into LocateOptions, and owns what those point to
// (the FFT cache and its cost table, the progress bar, the interrupt flag).
// Keep it alive while the job runs; call finish() after.
class EngineSetup {
 public:
  // Returns a usage message when the arguments are inconsistent.
  std::string configure(const EngineArgs& a, LocateOptions& o);
  void finish();

 private:
  std::unique_ptr<FftCache> cache_;
  FftCostTable costs_;
  std::unique_ptr<ProgressBar> bar_;
};

void warn(std::string_view s);

}  // namespace godwit
