#include "engine_options.h"

#include <cstdint>
#include <unistd.h>

#include <atomic>
#include <csignal>
#include <iostream>

#include "repair_report.h"

namespace godwit {
namespace {

std::atomic<bool> g_interrupted{false};
extern "C" void on_interrupt(int) { g_interrupted.store(true); }

}  // namespace

CLI::Range cli_range(NumberRange r) { return CLI::Range(r.lo, r.hi); }

void warn(std::string_view s) { std::cerr << "godwit: warning: " << s << "\n"; }

void add_engine_options(CLI::App* cmd, EngineArgs& a) {
  // The search flags land in a.search with the daemon's ranges (job_spec.h);
  // unset, they keep its defaults.
  SearchFields& s = a.search;
  cmd->add_option_function<double>(
         "--threshold", [&s](const double& v) { s.threshold = v; },
         "absolute score a match must reach, |r| in 0..1 (default 0.15; every match is then confirmed, see --unconfirmed)")
      ->check(cli_range(kThresholdRange));
  cmd->add_option_function<double>(
         "--floor-k", [&s](const double& v) { s.floor_k = v; },
         "a match must also exceed the local noise floor: median + K x 1.4826 x MAD (default 10)")
      ->check(cli_range(kFloorKRange));
  cmd->add_option("--rate", a.rate_hz, "analysis rate in Hz (default 8000)")->check(CLI::Range(1000.0, 192000.0));
  cmd->add_option("--channel", a.channel,
                  "use this channel of recordings (0 = left) instead of the mean of all channels");
  cmd->add_flag("--progress", a.progress, "show progress on stderr even when it is not a terminal");
  cmd->add_flag("--no-progress", a.no_progress, "never show progress");
  cmd->add_flag("--quiet,-q", a.quiet, "no progress, warnings or summary on stderr");
  cmd->add_option("--threads", a.threads, "worker threads (default: one per core); results do not depend on it")
      ->check(CLI::Range(0, 256));
  cmd->add_option_function<size_t>(
         "--fft-size", [&s](const size_t& v) { s.fft_size = v; },
         "use this FFT size for every template (power of two above the longest); default: chosen per "
         "template by measured cost")
      ->check(cli_range(kFftSizeRange));
  cmd->add_option("--planner", a.planner,
                  "FFTW planning: measure (default; slow once, then cached) or estimate (instant, slower FFTs)")
      ->check(CLI::IsMember({"estimate", "measure"}));
  cmd->add_option("--memory-mb", a.memory_mb, "memory budget in MiB for the masters' spectra (the full search) or their samples (the screened search, the default) (default 288)")
      ->check(CLI::Range(16, 1 << 20));
  cmd->add_option("--cache-dir", a.cache_dir,
                  "where FFTW wisdom and FFT costs are kept (default $XDG_CACHE_HOME/godwit or ~/.cache/godwit; "
                  "empty: no cache)");
  cmd->add_flag("--no-refine", a.no_refine, "skip the native-rate offset refinement");
  cmd->add_option("--max-speed-change", s.max_speed_change_pct,
                  "also find airings played up to PCT % faster or slower than their master (resampled: duration "
                  "and pitch together); each match reports its speed (default 4.5, which covers the 25/24 "
                  "film-rate change either way; 0: none)")
      ->check(cli_range(kSpeedChangePctRange));
  cmd->add_option("--max-tempo-change", s.max_tempo_change_pct,
                  "also find airings time-stretched up to PCT % with their pitch kept (a playout system's "
                  "time-stretcher); each match reports its tempo beside its speed (default 5; 0: none)")
      ->check(cli_range(kTempoChangePctRange));
  cmd->add_flag_function(
      "--screen,!--no-screen", [&s](std::int64_t n) { s.screen = n > 0; },
      "--no-screen: run the exact search over every sample (the reference) instead of screening first "
      "(default: correlate at 1 kHz, then search exactly at the analysis rate only around what that "
      "found, with the same results on the benchmark's air-chain days at 3-5x less CPU for the plain search)");
  cmd->add_flag("--no-speed-search", a.no_speed_search,
                "find only airings at their master's speed and tempo (about 1.5-2x faster)");
}

void EngineSetup::configure(const EngineArgs& a, const SearchFields& search, LocateOptions& o) {
  search.apply(o);
  if (a.no_speed_search) o.speed.enabled = false;
  o.analysis_rate_hz = a.rate_hz;
  o.channel.channel = a.channel;
  o.correlator.threads = a.threads;
  o.correlator.planner = a.planner == "estimate" ? Planner::estimate : Planner::measure;
  o.bank.spectra_budget_bytes = a.memory_mb << 20;
  o.refine = !a.no_refine;
  cache_ = std::make_unique<FftCache>(a.cache_dir, warn);
  costs_ = cache_->load();
  o.bank.costs = &costs_;
  const bool quiet = a.quiet;
  o.on_diagnostic = [quiet](std::string_view s) {
    if (!quiet) warn(s);
  };
  o.opener = reporting_opener(o.opener, o.on_diagnostic);
  const bool tty = isatty(STDERR_FILENO) != 0;
  if (a.progress || (tty && !a.no_progress && !a.quiet)) {
    bar_ = std::make_unique<ProgressBar>(tty);
    ProgressBar* bar = bar_.get();
    o.on_progress = [bar](const Progress& p) { bar->update(p); };
  }
  std::signal(SIGINT, on_interrupt);
  std::signal(SIGTERM, on_interrupt);
  o.should_stop = [] { return g_interrupted.load(); };
}

void EngineSetup::finish() {
  if (bar_) bar_->done();
  if (cache_) cache_->save(costs_);
}

}  // namespace godwit
