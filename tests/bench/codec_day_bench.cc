// codec_day_bench: a day of real codecs (the air-chain generator's MP3,
// FLAC and WAV files at 22.05-48 kHz, mono and stereo) against a library
// of N masters, located with the full search and with the screened one,
// each in a child process of its own (so that its peak memory is its own):
// wall and CPU time, peak memory, where the time went (decoding per codec,
// resampling, the plain search, the speed search, refinement), the FFT
// bound of the full search's transforms for the same recordings, and the
// detections of the two runs compared.
//
//   codec_day_bench [--hours 2] [--masters 100] [--seed 5] [--keep DIR]
#include <sys/resource.h>
#include <sys/wait.h>
#include <unistd.h>

#include <CLI/CLI.hpp>
#include <nlohmann/json.hpp>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <map>
#include <thread>

#include "air_day.h"
#include "cache_dir.h"
#include "godwit/search/job.h"
#include "search/fft_plans.h"
#include "synth.h"

using namespace godwit;

namespace {

double seconds(const timeval& t) { return static_cast<double>(t.tv_sec) + 1e-6 * static_cast<double>(t.tv_usec); }

// The FFT work the full search's plans need for `audio_s` seconds at the
// analysis rate (transforms and spectrum products only, on `threads`
// threads), extrapolated from a few blocks per FFT size.
double fft_bound_cpu_s(const std::vector<TemplateReport>& templates, double audio_s, double rate_hz, size_t threads) {
  std::map<size_t, std::pair<size_t, size_t>> groups;  // size -> (members, longest)
  for (const auto& t : templates) {
    auto& g = groups[t.fft_size];
    g.first++;
    g.second = std::max(g.second, static_cast<size_t>(std::llround(t.duration_s * rate_hz)));
  }
  detail::FftPlans plans(Planner::measure);
  double total = 0;
  for (const auto& [size, g] : groups) {
    const auto& plan = plans.get(size);
    const size_t bins = size / 2 + 1;
    auto block = detail::alloc_real(size);
    auto spec = detail::alloc_complex(bins);
    auto tmpl = detail::alloc_complex(bins);
    for (size_t i = 0; i < bins; ++i) tmpl[i] = {0.5f, 0.1f};
    for (size_t i = 0; i < size; ++i) block[i] = std::sin(static_cast<float>(i) * 0.01f);
    const size_t nt = std::max<size_t>(1, std::min(threads, g.first));
    std::vector<detail::ComplexBuffer> prod;
    std::vector<detail::RealBuffer> out;
    for (size_t w = 0; w < nt; ++w) prod.push_back(detail::alloc_complex(bins)), out.push_back(detail::alloc_real(size));
    constexpr size_t kBlocks = 4;
    double per_block = 1e300;
    for (int round = 0; round < 3; ++round) {
      rusage a{}, b{};
      getrusage(RUSAGE_SELF, &a);
      std::vector<std::thread> pool;
      for (size_t w = 0; w < nt; ++w)
        pool.emplace_back([&, w] {
          for (size_t k = 0; k < kBlocks; ++k) {
            if (w == 0) fftwf_execute_dft_r2c(plan.forward, block.get(), detail::as_fftw(spec.get()));
            for (size_t m = w; m < g.first; m += nt) {
              detail::multiply_spectra(spec.get(), tmpl.get(), prod[w].get(), bins);
              fftwf_execute_dft_c2r(plan.inverse, detail::as_fftw(prod[w].get()), out[w].get());
            }
          }
        });
      for (auto& t : pool) t.join();
      getrusage(RUSAGE_SELF, &b);
      const double cpu = seconds(b.ru_utime) + seconds(b.ru_stime) - seconds(a.ru_utime) - seconds(a.ru_stime);
      per_block = std::min(per_block, cpu / kBlocks);
    }
    total += per_block * std::ceil(audio_s * rate_hz / static_cast<double>(size - g.second + 1));
  }
  return total;
}

struct RunLine {
  double wall_s = 0, cpu_s = 0, rss_mib = 0;
};

// Runs one locate in a child process; the child writes its result's
// matches and timings to `out_path` (JSON) and prints its breakdown.
RunLine run_child(const LocateJob& job, bool screened, const std::string& cache_dir, const std::string& out_path,
                  const std::map<std::string, std::string>& codec_of) {
  const auto t0 = std::chrono::steady_clock::now();
  const pid_t pid = fork();
  if (pid == 0) {
    FftCache cache(cache_dir, [](std::string_view) {});
    FftCostTable costs = cache.load();
    LocateOptions o;
    o.screen.enabled = screened;
    o.bank.costs = &costs;
    o.correlator.planner = Planner::measure;
    auto r = run_locate(job, o);
    if (!r) {
      std::fprintf(stderr, "codec_day_bench: %s\n", r.error().describe().c_str());
      _exit(1);
    }
    cache.save(costs);
    const auto& t = r.value().times;
    std::map<std::string, std::pair<double, double>> per_codec;  // codec -> (decode s, audio s)
    for (const auto& rec : r.value().recordings) {
      auto& c = per_codec[codec_of.at(rec.path)];
      c.first += rec.decode_s;
      c.second += rec.duration_s;
    }
    std::printf("  %s search, wall s of each step:\n", screened ? "screened" : "full");
    std::printf("    masters %.1f | decode %.1f | resample %.1f | plain search %.1f", t.masters_s, t.decode_s,
                t.resample_s, t.search_s);
    if (screened)
      std::printf(" (decimation %.1f, screen %.1f, exact spans %.1f)", t.screen_decimate_s, t.screen_correlate_s,
                  t.exact_spans_s);
    std::printf(" | speed scan %.1f | speed fits %.1f | refinement %.1f\n", t.speed_scan_s, t.speed_fit_s, t.refine_s);
    std::printf("    decode per codec (audio-s per wall-s):");
    for (const auto& [codec, c] : per_codec) std::printf(" %s %.0f", codec.c_str(), c.second / std::max(1e-9, c.first));
    std::printf("\n");
    if (screened)
      std::printf("    screen: %zu candidates, %zu spans, %zu (span, master) pairs scored exactly\n",
                  r.value().screen_candidates, r.value().exact_spans, r.value().exact_span_masters);
    nlohmann::json j;
    j["matches"] = nlohmann::json::array();
    for (const auto& m : r.value().matches) j["matches"].push_back({m.template_id, m.recording, m.offset_s, m.score});
    j["templates"] = nlohmann::json::array();
    for (const auto& tr : r.value().templates) j["templates"].push_back({tr.duration_s, tr.fft_size});
    std::ofstream(out_path) << j.dump();
    std::fflush(stdout);
    _exit(0);
  }
  int status = 0;
  rusage ru{};
  wait4(pid, &status, 0, &ru);
  RunLine line;
  line.wall_s = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
  line.cpu_s = seconds(ru.ru_utime) + seconds(ru.ru_stime);
  line.rss_mib = static_cast<double>(ru.ru_maxrss) / 1024.0;
  if (!WIFEXITED(status) || WEXITSTATUS(status) != 0) {
    std::fprintf(stderr, "codec_day_bench: the %s run failed\n", screened ? "screened" : "full");
    std::exit(1);
  }
  return line;
}

}  // namespace

int main(int argc, char** argv) {
  CLI::App app{"codec_day_bench: a real-codec day, full vs screened search, where the time goes"};
  double hours = 2;
  size_t masters = 100;
  uint64_t seed = 5;
  std::string keep;
  std::string cache = default_cache_dir();
  app.add_option("--hours", hours, "length of the day (default 2)");
  app.add_option("--masters", masters, "masters in the library: the day's own and unaired spots of 30 s (default 100)");
  app.add_option("--seed", seed, "the day's seed (default 5)");
  app.add_option("--keep", keep, "write the day here and reuse it next time");
  app.add_option("--cache-dir", cache, "FFTW wisdom and FFT costs (as godwit locate)");
  CLI11_PARSE(app, argc, argv);

  const auto dir = keep.empty() ? std::filesystem::temp_directory_path() / ("godwit-codec-day-" + std::to_string(getpid()))
                                : std::filesystem::path(keep);
  synth::AirDayOptions ao;
  ao.hours = hours;
  ao.seed = seed;
  ao.dir = dir.string();
  ao.reuse = !keep.empty();
  std::string err;
  auto day = synth::make_air_day(ao, &err);
  if (!day) {
    std::fprintf(stderr, "codec_day_bench: %s\n", err.c_str());
    return 1;
  }
  LocateJob job;
  for (const auto& m : day->masters) job.templates.push_back(m.path);
  // Unaired spots of 30 s at 48 kHz fill the library to N masters.
  std::filesystem::create_directories(dir / "unaired");
  for (size_t i = job.templates.size(); i < masters; ++i) {
    const std::string path = (dir / "unaired" / ("unaired-" + std::to_string(i) + ".wav")).string();
    if (!std::filesystem::exists(path)) {
      if (auto e = synth::write_audio(path, synth::spot(30, 48000, seed * 7919 + i), 1, 48000); !e.empty()) {
        std::fprintf(stderr, "codec_day_bench: %s\n", e.c_str());
        return 1;
      }
    }
    job.templates.push_back(path);
  }
  std::map<std::string, std::string> codec_of;
  std::map<std::string, int> codecs;
  double audio_s = 0;
  for (const auto& f : day->files) {
    job.recordings.push_back(f.path);
    const std::string c = f.codec + "@" + std::to_string(static_cast<int>(f.rate_hz / 1000)) + "k" +
                          (f.channels == 2 ? " stereo" : "");
    codec_of[f.path] = c;
    codecs[c]++;
    audio_s += f.duration_s;
  }
  std::printf("workload codec day: %.2f h in %zu files, %zu masters (%zu aired that day), seed %llu\n", hours,
              day->files.size(), job.templates.size(), day->masters.size(), static_cast<unsigned long long>(seed));
  std::printf("  files:");
  for (const auto& [c, n] : codecs) std::printf(" %s x%d", c.c_str(), n);
  std::printf("\n");
  std::fflush(stdout);
  const std::string full_json = (dir / "full.json").string(), scr_json = (dir / "screened.json").string();
  const RunLine full = run_child(job, false, cache, full_json, codec_of);
  const RunLine scr = run_child(job, true, cache, scr_json, codec_of);
  nlohmann::json jf, js;
  std::ifstream(full_json) >> jf;
  std::ifstream(scr_json) >> js;
  std::vector<TemplateReport> templates;
  for (const auto& t : jf["templates"]) templates.push_back({"", "", t[0].get<double>(), t[1].get<size_t>()});
  const size_t threads = std::max(1u, std::thread::hardware_concurrency());
  const double bound_cpu = fft_bound_cpu_s(templates, audio_s, 8000, threads);
  size_t both = 0;
  for (const auto& a : jf["matches"])
    for (const auto& b : js["matches"])
      if (a[0] == b[0] && a[1] == b[1] && std::fabs(a[2].get<double>() - b[2].get<double>()) < 1e-4) {
        ++both;
        break;
      }
  std::printf("  %-44s %9s %9s %10s %12s\n", "", "wall s", "CPU s", "peak MiB", "24 h wall s");
  auto row = [&](const char* name, const RunLine& l) {
    std::printf("  %-44s %9.1f %9.1f %10.0f %12.0f\n", name, l.wall_s, l.cpu_s, l.rss_mib, l.wall_s * 24 / hours);
  };
  row("full search (speed search on, the default)", full);
  row("screened search (speed search on)", scr);
  std::printf("  %-44s %9s %9.1f\n", "FFT bound of the full search's plain search", "", bound_cpu);
  std::printf("  targets (24 h x 100 masters): wall <= 90 s, peak <= 512 MiB\n");
  std::printf("  detections: full %zu, screened %zu, in both %zu\n", jf["matches"].size(), js["matches"].size(), both);
  if (keep.empty()) std::filesystem::remove_all(dir);
  return 0;
}
