#include "locate_command.h"

#include <unistd.h>

#include <atomic>
#include <csignal>
#include <cstdio>
#include <iostream>
#include <memory>

#include "atomic_file.h"
#include "cache_dir.h"
#include "godwit/job.h"
#include "godwit/locate_report.h"
#include "library_scan.h"
#include "progress_bar.h"

namespace godwit {
namespace {

std::atomic<bool> g_interrupted{false};
extern "C" void on_interrupt(int) { g_interrupted.store(true); }

struct LocateArgs {
  std::vector<std::string> templates;
  std::string library;
  std::vector<std::string> recordings;
  double threshold = 0.4;
  double floor_k = 10;
  double rate_hz = 8000;
  int channel = -1;
  std::string format = "json";
  std::string out;
  bool progress = false;
  bool no_progress = false;
  int threads = 0;
  size_t fft_size = 0;
  std::string planner = "measure";
  size_t memory_mb = 320;
  std::string cache_dir = default_cache_dir();
  bool no_refine = false;
  bool quiet = false;
};

void warn(std::string_view s) { std::cerr << "godwit: warning: " << s << "\n"; }

int run(const LocateArgs& a) {
  auto fail = [](const Error& e) {
    std::cerr << "godwit: " << e.describe() << "\n";
    return exit_code(e.code);
  };
  LocateJob job;
  job.templates = a.templates;
  if (!a.library.empty()) {
    auto files = scan_library(a.library);
    if (!files) return fail(files.error());
    job.templates.insert(job.templates.end(), files.value().begin(), files.value().end());
  }
  if (job.templates.empty()) return fail({ErrorCode::usage, "give --template FILE... or --library DIR", "", {}});
  job.recordings = a.recordings;

  LocateOptions o;
  o.analysis_rate_hz = a.rate_hz;
  o.channel.channel = a.channel;
  o.picker.threshold = a.threshold;
  o.picker.floor_k = a.floor_k;
  o.correlator.threads = a.threads;
  o.correlator.planner = a.planner == "estimate" ? Planner::estimate : Planner::measure;
  o.bank.fixed_fft_size = a.fft_size;
  o.bank.spectra_budget_bytes = a.memory_mb << 20;
  o.refine = !a.no_refine;
  FftCache cache(a.cache_dir, warn);
  FftCostTable costs = cache.load();
  o.bank.costs = &costs;
  o.on_diagnostic = [&](std::string_view s) {
    if (!a.quiet) warn(s);
  };
  std::unique_ptr<ProgressBar> bar;
  const bool tty = isatty(STDERR_FILENO) != 0;
  if (a.progress || (tty && !a.no_progress && !a.quiet)) {
    bar = std::make_unique<ProgressBar>(tty);
    o.on_progress = [&](const Progress& p) { bar->update(p); };
  }
  std::signal(SIGINT, on_interrupt);
  std::signal(SIGTERM, on_interrupt);
  o.should_stop = [] { return g_interrupted.load(); };

  auto result = run_locate(job, o);
  if (bar) bar->done();
  cache.save(costs);
  if (!result) {
    if (result.error().code == ErrorCode::cancelled) {
      std::cerr << "godwit: interrupted; no output written\n";
      return exit_code(ErrorCode::cancelled);
    }
    return fail(result.error());
  }
  const LocateResult& r = result.value();
  const std::string doc = a.format == "csv" ? locate_to_csv(r) : locate_to_json(r).dump(2) + "\n";
  if (a.out.empty() || a.out == "-") {
    std::fwrite(doc.data(), 1, doc.size(), stdout);
    if (std::fflush(stdout) != 0) return fail({ErrorCode::io, "cannot write to standard output", "", {}});
  } else if (auto st = write_file_atomically(a.out, doc); !st) {
    return fail(st.error());
  }
  size_t failed = 0;
  for (const auto& rec : r.recordings) failed += rec.error ? 1 : 0;
  if (!a.quiet)
    std::cerr << "godwit: " << r.matches.size() << " match(es) in " << r.recordings.size() << " recording(s)"
              << (failed ? ", " + std::to_string(failed) + " with errors (see \"error\" in the output)" : "")
              << "\n";
  if (failed == r.recordings.size()) return 3;
  return failed ? 4 : 0;
}

}  // namespace

std::function<int()> add_locate_command(CLI::App& app) {
  auto a = std::make_shared<LocateArgs>();
  auto* cmd = app.add_subcommand("locate", "find where masters occur in recordings");
  cmd->description(
      "Find every place where each master (template) occurs in each recording, by normalized\n"
      "cross-correlation at the analysis rate, with offsets refined at the recording's native rate.\n"
      "Prints JSON (default) or CSV to standard output or --out. Detections are evidence to verify\n"
      "by listening.");
  cmd->add_option("--template,-t", a->templates, "master file(s) to find; id = file stem")->check(CLI::ExistingFile);
  cmd->add_option("--library,-l", a->library, "folder of masters (its audio files, not recursive)");
  cmd->add_option("--recording,-r", a->recordings, "recording(s) to search (WAV, FLAC, OGG, Opus, MP3)")->required();
  cmd->add_option("--threshold", a->threshold,
                  "absolute score a match must reach, |r| in 0..1 (default 0.4)")
      ->check(CLI::Range(0.05, 1.0));
  cmd->add_option("--floor-k", a->floor_k,
                  "a match must also exceed the local noise floor: median + K x 1.4826 x MAD (default 10)")
      ->check(CLI::Range(0.0, 1000.0));
  cmd->add_option("--rate", a->rate_hz, "analysis rate in Hz (default 8000)")->check(CLI::Range(1000.0, 192000.0));
  cmd->add_option("--channel", a->channel,
                  "use this channel of recordings (0 = left) instead of the mean of all channels");
  cmd->add_option("--format", a->format, "output format: json or csv (default json)")
      ->check(CLI::IsMember({"json", "csv"}));
  cmd->add_option("--out,-o", a->out, "write the output to FILE (atomically) instead of standard output");
  cmd->add_flag("--progress", a->progress, "show progress on stderr even when it is not a terminal");
  cmd->add_flag("--no-progress", a->no_progress, "never show progress");
  cmd->add_flag("--quiet,-q", a->quiet, "no progress, warnings or summary on stderr");
  cmd->add_option("--threads", a->threads, "worker threads (default: one per core); results do not depend on it")
      ->check(CLI::Range(0, 256));
  cmd->add_option("--fft-size", a->fft_size,
                  "use this FFT size for every template (power of two above the longest); default: chosen per "
                  "template by measured cost");
  cmd->add_option("--planner", a->planner,
                  "FFTW planning: measure (default; slow once, then cached) or estimate (instant, slower FFTs)")
      ->check(CLI::IsMember({"estimate", "measure"}));
  cmd->add_option("--memory-mb", a->memory_mb, "memory budget for template spectra in MiB (default 320)")
      ->check(CLI::Range(16, 1 << 20));
  cmd->add_option("--cache-dir", a->cache_dir,
                  "where FFTW wisdom and FFT costs are kept (default $XDG_CACHE_HOME/godwit or ~/.cache/godwit; "
                  "empty: no cache)");
  cmd->add_flag("--no-refine", a->no_refine, "skip the native-rate offset refinement");
  cmd->footer(
      "Exit codes: 0 done; 2 usage error; 3 a master or every recording could not be read;\n"
      "4 done, but some recording failed or broke part way (its error is in the output);\n"
      "5 the output could not be written; 130 interrupted (no output written).");
  return [cmd, a]() -> int {
    if (a->fft_size && (a->fft_size & (a->fft_size - 1))) {
      std::cerr << "godwit: --fft-size must be a power of two\n";
      return 2;
    }
    (void)cmd;
    return run(*a);
  };
}

}  // namespace godwit
