// Over 400 lines: each named workload with the bound it is measured against, in one program as scripts/bench.sh runs it.
// godwit_bench: named workloads that print the engine's numbers beside a
// bound or a peer measured in the same run.
//
//   throughput   K templates of 30 s against H hours at 8 kHz: engine
//                (plain search) throughput vs the FFT bound (only the transforms and
//                spectrum products the same plans need) and, when Debian's
//                python3 with scipy and OpenCV is present, vs
//                scipy.signal.correlate(method='fft') + cumulative sums and
//                OpenCV matchTemplate(TM_CCOEFF_NORMED).
//   day          100 templates of 30 s against 24 h: wall time, CPU time and
//                peak memory against the targets; every planted clip found.
//   false-alarms 20 templates against 1 h of unrelated programme and 1 h of
//                silence with dropouts and spikes (zero detections wanted),
//                and against 1 h with the 20 clips planted (all wanted).
//   speed        20 templates against 2 h holding airings resampled by
//                0.5-4.17 % either way (libsoxr), at 3-20 dB SNR and 0.5-1
//                coverage, unchanged airings, and tempo-only changes made by
//                sox's WSOLA `tempo` effect: the same job with the speed
//                search off and on, CPU time side by side, recall, speed and
//                offset errors, other detections.
//   screen       K templates against H hours: the plain search full and
//                screened (screen_options.h), CPU side by side with the full
//                search's FFT bound, the detections of both compared.
//   families     sibling discovery over a library of N masters of 20-30 s
//                (families of 2-3 versions among independent spots): every
//                pair scored exactly, and screened at 1 kHz first, CPU time
//                side by side, the families found compared.
#include <sys/resource.h>

#include <CLI/CLI.hpp>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <map>
#include <thread>

#include "cache_dir.h"
#include "godwit/compliance/families.h"
#include "search/fft_plans.h"
#include "godwit/search/job.h"
#include "godwit/audio/memory_source.h"
#include "godwit/audio/analysis_stream.h"
#include "godwit/audio/resampler.h"
#include "programme_source.h"
#include "synth.h"

using namespace godwit;
using Clock = std::chrono::steady_clock;

namespace {

constexpr double kRate = 8000;

double cpu_seconds() {
  rusage ru{};
  getrusage(RUSAGE_SELF, &ru);
  auto s = [](const timeval& t) { return static_cast<double>(t.tv_sec) + static_cast<double>(t.tv_usec) * 1e-6; };
  return s(ru.ru_utime) + s(ru.ru_stime);
}

double peak_rss_mib() {
  rusage ru{};
  getrusage(RUSAGE_SELF, &ru);
  return static_cast<double>(ru.ru_maxrss) / 1024.0;
}

struct Scenario {
  std::vector<std::string> template_paths;
  std::vector<synth::PlantedClip> plants;
  std::vector<std::pair<std::string, double>> truth;  // id, offset_s
};

// Masters are written as WAV files (so the job reads them as in real use
// and the benchmark holds none in memory); at most `max_planted` of them
// are planted once each, spread over the recording.
Scenario make_scenario(size_t k, double hours, bool plant, uint64_t seed, size_t max_planted = 1000) {
  Scenario s;
  const double length_s = hours * 3600;
  const auto dir = std::filesystem::temp_directory_path() / ("godwit-bench-masters-" + std::to_string(seed));
  std::filesystem::create_directories(dir);
  const size_t planted = plant ? std::min(k, max_planted) : 0;
  for (size_t i = 0; i < k; ++i) {
    const std::string path = (dir / ("spot" + std::to_string(i) + ".wav")).string();
    Samples clip = synth::spot(30.0, kRate, seed + i);
    if (auto err = synth::write_audio(path, clip, 1, kRate); !err.empty()) {
      std::fprintf(stderr, "bench: %s\n", err.c_str());
      std::exit(1);
    }
    s.template_paths.push_back(path);
    if (i < planted) {
      const double off = (static_cast<double>(i) + 0.37) * (length_s - 40) / static_cast<double>(planted);
      const int64_t at = static_cast<int64_t>(off * kRate);
      s.plants.push_back({std::make_shared<const Samples>(std::move(clip)), at, 0.8f});
      s.truth.emplace_back("spot" + std::to_string(i), static_cast<double>(at) / kRate);
    }
  }
  return s;
}

std::shared_ptr<const synth::SegmentPool> pool_for(uint64_t seed) {
  static std::map<uint64_t, std::shared_ptr<const synth::SegmentPool>> pools;
  auto& p = pools[seed];
  if (!p) p = synth::make_segment_pool(kRate, 24, seed);
  return p;
}

SourceOpener scenario_opener(const Scenario& s, double hours, uint64_t seed, synth::Content content) {
  auto pool = pool_for(seed);
  return [&s, hours, seed, content, pool](const std::string& path, ChannelChoice c) -> Result<SourcePtr> {
    if (std::filesystem::exists(path)) return open_audio_file(path, c);
    return SourcePtr(std::make_unique<synth::ProgrammeSource>(path, kRate, hours * 3600, seed, s.plants, content, pool));
  };
}

struct RunStats {
  double wall_s = 0, cpu_s = 0;
  LocateResult result;
};

RunStats run_job(const Scenario& s, const std::vector<std::string>& recordings, double hours, uint64_t seed,
                 synth::Content content, FftCostTable& costs, int threads, bool speed_search = true,
                 bool screened = false) {
  LocateOptions o;
  o.speed.enabled = speed_search;
  o.screen.enabled = screened;
  o.opener = scenario_opener(s, hours, seed, content);
  o.correlator.planner = Planner::measure;
  o.correlator.threads = threads;
  o.bank.costs = &costs;
  const auto t0 = Clock::now();
  const double c0 = cpu_seconds();
  auto r = run_locate({s.template_paths, recordings}, o);
  RunStats st;
  st.cpu_s = cpu_seconds() - c0;
  st.wall_s = std::chrono::duration<double>(Clock::now() - t0).count();
  if (!r) {
    std::fprintf(stderr, "bench: %s\n", r.error().describe().c_str());
    std::exit(1);
  }
  st.result = std::move(r.value());
  return st;
}

// Transforms and products only, with the bank's sizes and FFTW's plans,
// on as many threads as the engine used (they share memory bandwidth as
// the engine's do): CPU seconds for the whole recording, extrapolated from
// `sample_blocks` blocks per group, the fastest of three rounds.
double fft_bound_cpu_s(const std::vector<TemplateReport>& templates, double audio_s, size_t sample_blocks,
                       size_t threads) {
  std::map<size_t, std::pair<size_t, size_t>> groups;  // size -> (members, max len)
  for (const auto& t : templates) {
    auto& g = groups[t.fft_size];
    g.first++;
    g.second = std::max(g.second, static_cast<size_t>(std::llround(t.duration_s * kRate)));
  }
  detail::FftPlans plans(Planner::measure);
  double total = 0;
  for (const auto& [size, g] : groups) {
    const auto& plan = plans.get(size);
    const size_t bins = size / 2 + 1;
    auto block = detail::alloc_real(size);
    auto spec = detail::alloc_complex(bins);
    std::vector<detail::ComplexBuffer> tmpl;
    for (size_t m = 0; m < g.first; ++m) {
      tmpl.push_back(detail::alloc_complex(bins));
      for (size_t i = 0; i < bins; ++i) tmpl.back()[i] = {0.5f, 0.1f};
    }
    for (size_t i = 0; i < size; ++i) block[i] = std::sin(static_cast<float>(i) * 0.01f);
    fftwf_execute_dft_r2c(plan.forward, block.get(), detail::as_fftw(spec.get()));
    const size_t nt = std::max<size_t>(1, std::min(threads, g.first));
    std::vector<detail::ComplexBuffer> prod;
    std::vector<detail::RealBuffer> out;
    for (size_t w = 0; w < nt; ++w) prod.push_back(detail::alloc_complex(bins)), out.push_back(detail::alloc_real(size));
    double per_block = 1e300;
    for (int round = 0; round < 3; ++round) {
      const double c0 = cpu_seconds();
      std::vector<std::thread> pool;
      for (size_t w = 0; w < nt; ++w)
        pool.emplace_back([&, w] {
          for (size_t b = 0; b < sample_blocks; ++b) {
            if (w == 0) fftwf_execute_dft_r2c(plan.forward, block.get(), detail::as_fftw(spec.get()));
            for (size_t m = w; m < g.first; m += nt) {
              detail::multiply_spectra(spec.get(), tmpl[m].get(), prod[w].get(), bins);
              fftwf_execute_dft_c2r(plan.inverse, detail::as_fftw(prod[w].get()), out[w].get());
            }
          }
        });
      for (auto& t : pool) t.join();
      per_block = std::min(per_block, (cpu_seconds() - c0) / static_cast<double>(sample_blocks));
    }
    const double step = static_cast<double>(size - g.second + 1);
    total += per_block * std::ceil(audio_s * kRate / step);
  }
  return total;
}

struct Recall {
  size_t found = 0, missed = 0, extra = 0;
  double max_err_s = 0;
};

Recall score_against(const Scenario& s, const LocateResult& r) {
  Recall rc;
  std::vector<bool> used(r.matches.size());
  for (const auto& [id, off] : s.truth) {
    bool hit = false;
    for (size_t i = 0; i < r.matches.size(); ++i) {
      if (used[i] || r.matches[i].template_id != id || std::fabs(r.matches[i].offset_s - off) > 0.01) continue;
      used[i] = hit = true;
      rc.max_err_s = std::max(rc.max_err_s, std::fabs(r.matches[i].offset_s - off));
      break;
    }
    hit ? rc.found++ : rc.missed++;
  }
  for (bool u : used) rc.extra += u ? 0 : 1;
  return rc;
}

void run_peers(double minutes, size_t k) {
  const std::string py = "/usr/bin/python3";
  if (!std::filesystem::exists(py)) {
    std::printf("  peers: /usr/bin/python3 not found, skipped\n");
    return;
  }
  const auto dir = std::filesystem::temp_directory_path() / "godwit-bench-peers";
  std::filesystem::create_directories(dir);
  Samples x = synth::programme(minutes * 60, kRate, 99);
  std::ofstream(dir / "x.f32", std::ios::binary)
      .write(reinterpret_cast<const char*>(x.data()), static_cast<long>(x.size() * 4));
  for (size_t i = 0; i < k; ++i) {
    Samples t = synth::spot(30.0, kRate, 500 + i);
    std::ofstream(dir / ("t" + std::to_string(i) + ".f32"), std::ios::binary)
        .write(reinterpret_cast<const char*>(t.data()), static_cast<long>(t.size() * 4));
  }
  const std::string cmd = py + " " + GODWIT_SOURCE_DIR + "/tests/bench/peers.py " + dir.string() + " " +
                          std::to_string(k) + " " + std::to_string(kRate);
  std::fflush(stdout);
  if (std::system(cmd.c_str()) != 0) std::printf("  peers: python3 with scipy and OpenCV not available, skipped\n");
  std::filesystem::remove_all(dir);
}

int throughput(size_t k, double hours, const std::string& cache_dir, bool peers, int threads) {
  FftCache cache(cache_dir, [](std::string_view s) { std::fprintf(stderr, "bench: %.*s\n", int(s.size()), s.data()); });
  FftCostTable costs = cache.load();
  Scenario s = make_scenario(k, hours, true, 1000);
  // Plan and measure sizes first (not part of the throughput). The plain
  // search only: the bound is that of its transforms (the speed search has
  // its own workload).
  run_job(s, {"warmup"}, 0.01, 1, synth::Content::programme, costs, 0, false);
  cache.save(costs);
  RunStats st = run_job(s, {"air"}, hours, 7, synth::Content::programme, costs, threads, false);
  const double audio_s = hours * 3600;
  const size_t engine_threads = threads > 0 ? static_cast<size_t>(threads) : std::max(1u, std::thread::hardware_concurrency());
  const double bound_cpu = fft_bound_cpu_s(st.result.templates, audio_s, 8, engine_threads);
  const Recall rc = score_against(s, st.result);
  std::printf("workload throughput: %zu templates x 30 s, %.2f h at 8 kHz, %d thread(s)\n", k, hours,
              threads > 0 ? threads : int(std::max(1u, std::thread::hardware_concurrency())));
  std::printf("  fft sizes:");
  std::map<size_t, int> sizes;
  for (const auto& t : st.result.templates) sizes[t.fft_size]++;
  for (auto [sz, n] : sizes) std::printf(" %zu x %d", sz, n);
  std::printf("\n");
  std::printf("  %-34s %14s %12s\n", "", "audio-s/CPU-s", "per template");
  const double eng = audio_s / st.cpu_s, bnd = audio_s / bound_cpu;
  std::printf("  %-34s %14.0f %12.0f\n", "godwit engine (whole job)", eng, eng * static_cast<double>(k));
  std::printf("  %-34s %14.0f %12.0f\n", "FFT bound (same plans, sizes, threads)", bnd, bnd * static_cast<double>(k));
  std::printf("  engine / bound = %.2f   (target >= 0.80)\n", bound_cpu / st.cpu_s);
  std::printf("  wall %.1f s, CPU %.1f s, realtime factor %.0fx, peak RSS %.0f MiB\n", st.wall_s, st.cpu_s,
              audio_s / st.wall_s, peak_rss_mib());
  std::printf("  planted %zu: found %zu, missed %zu, other detections %zu, max offset error %.3f ms\n",
              s.truth.size(), rc.found, rc.missed, rc.extra, rc.max_err_s * 1e3);
  std::printf("  engine per template: %.0f audio-s per CPU-s\n", eng * static_cast<double>(k));
  if (peers) run_peers(10, 2);
  return 0;
}

// The plain search, full and screened, on the same recording in one run,
// beside the full search's FFT bound.
int screen(size_t k, double hours, const std::string& cache_dir) {
  FftCache cache(cache_dir, [](std::string_view s) { std::fprintf(stderr, "bench: %.*s\n", int(s.size()), s.data()); });
  FftCostTable costs = cache.load();
  Scenario s = make_scenario(k, hours, true, 4000);
  run_job(s, {"warmup"}, 0.01, 1, synth::Content::programme, costs, 0, false);
  run_job(s, {"warmup"}, 0.01, 1, synth::Content::programme, costs, 0, false, true);
  cache.save(costs);
  // The programme made once and written as a WAV file that both runs read
  // (as a recording is read in use): neither pays for its synthesis.
  const std::string wav = (std::filesystem::temp_directory_path() / "godwit-bench-screen.wav").string();
  {
    auto made = scenario_opener(s, hours, 9, synth::Content::programme)("air", {});
    auto samples = decode_all(*made.value(), kRate);
    if (!samples) return 1;
    if (auto err = synth::write_audio(wav, samples.value(), 1, kRate); !err.empty()) {
      std::fprintf(stderr, "bench: %s\n", err.c_str());
      return 1;
    }
  }
  RunStats full = run_job(s, {wav}, hours, 9, synth::Content::programme, costs, 0, false);
  RunStats scr = run_job(s, {wav}, hours, 9, synth::Content::programme, costs, 0, false, true);
  std::filesystem::remove(wav);
  const double audio_s = hours * 3600;
  const size_t threads = std::max(1u, std::thread::hardware_concurrency());
  const double bound_cpu = fft_bound_cpu_s(full.result.templates, audio_s, 8, threads);
  std::printf("workload screen: %zu templates x 30 s, %.2f h at 8 kHz (plain search)\n", k, hours);
  std::printf("  %-40s %14s %12s %9s\n", "", "audio-s/CPU-s", "per template", "wall s");
  auto row = [&](const char* name, double cpu_s, double wall_s) {
    const double r = audio_s / cpu_s;
    std::printf("  %-40s %14.0f %12.0f %9.1f\n", name, r, r * static_cast<double>(k), wall_s);
  };
  row("full search", full.cpu_s, full.wall_s);
  row("screened search", scr.cpu_s, scr.wall_s);
  row("FFT bound of the full search", bound_cpu, 0);
  std::printf("  screened / FFT bound = %.2f (target >= 5), screened / full = %.2f\n", bound_cpu / scr.cpu_s,
              full.cpu_s / scr.cpu_s);
  std::printf("  screen: %zu candidates, %zu spans scored exactly, %zu (span, master) pairs\n",
              scr.result.screen_candidates, scr.result.exact_spans, scr.result.exact_span_masters);
  const auto& t = scr.result.times;
  std::printf("  screened, wall s: decimation %.2f, screen correlation %.2f, exact spans %.2f, the rest %.2f\n",
              t.screen_decimate_s, t.screen_correlate_s, t.exact_spans_s,
              scr.wall_s - t.screen_decimate_s - t.screen_correlate_s - t.exact_spans_s);
  size_t same = 0;
  for (const auto& a : full.result.matches)
    for (const auto& b : scr.result.matches)
      if (a.template_id == b.template_id && std::fabs(a.offset_s - b.offset_s) < 1e-3) {
        ++same;
        break;
      }
  const Recall rf = score_against(s, full.result), rs = score_against(s, scr.result);
  std::printf("  detections: full %zu, screened %zu, in both %zu\n", full.result.matches.size(),
              scr.result.matches.size(), same);
  std::printf("  planted %zu: full found %zu (other %zu), screened found %zu (other %zu)\n", s.truth.size(), rf.found,
              rf.extra, rs.found, rs.extra);
  return 0;
}

int day(size_t k, double hours, const std::string& cache_dir, bool speed_search) {
  FftCache cache(cache_dir, [](std::string_view) {});
  FftCostTable costs = cache.load();
  Scenario s = make_scenario(k, hours, true, 2000, 20);
  RunStats st = run_job(s, {"day"}, hours, 11, synth::Content::programme, costs, 0, speed_search);
  cache.save(costs);
  const Recall rc = score_against(s, st.result);
  std::printf("workload day: %zu templates x 30 s against %.1f h at 8 kHz, speed search %s\n", k, hours,
              speed_search ? "on" : "off");
  std::printf("  wall %.1f s (target <= 360 s), CPU %.1f s, peak RSS %.0f MiB (target <= 512 MiB)\n", st.wall_s,
              st.cpu_s, peak_rss_mib());
  std::printf("  planted %zu: found %zu, missed %zu, other detections %zu, max offset error %.3f ms\n",
              s.truth.size(), rc.found, rc.missed, rc.extra, rc.max_err_s * 1e3);
  return 0;
}

int false_alarms(const std::string& cache_dir) {
  FftCache cache(cache_dir, [](std::string_view) {});
  FftCostTable costs = cache.load();
  const size_t k = 20;
  Scenario clean = make_scenario(k, 1.0, false, 3000);
  RunStats prog = run_job(clean, {"programme"}, 1.0, 21, synth::Content::programme, costs, 0);
  RunStats sil = run_job(clean, {"silence"}, 1.0, 22, synth::Content::silence_with_faults, costs, 0);
  Scenario planted = make_scenario(k, 1.0, true, 3000);
  RunStats pl = run_job(planted, {"planted"}, 1.0, 23, synth::Content::programme, costs, 0);
  cache.save(costs);
  const Recall rc = score_against(planted, pl.result);
  std::printf("workload false-alarms: %zu templates x 30 s\n", k);
  std::printf("  1 h unrelated programme:           %zu detections (target 0)\n", prog.result.matches.size());
  std::printf("  1 h silence, dropouts, spikes:     %zu detections (target 0)\n", sil.result.matches.size());
  std::printf("  1 h with %zu planted:              found %zu, missed %zu, other %zu, max offset error %.3f ms\n",
              planted.truth.size(), rc.found, rc.missed, rc.extra, rc.max_err_s * 1e3);
  return 0;
}

int speed(const std::string& cache_dir, double hours) {
  FftCache cache(cache_dir, [](std::string_view) {});
  FftCostTable costs = cache.load();
  const size_t k = 20;
  Scenario s = make_scenario(k, hours, false, 4000);
  const auto dir = std::filesystem::temp_directory_path() / "godwit-bench-speed";
  std::filesystem::create_directories(dir);
  struct Planted {
    std::string id;
    double offset_s, speed, snr_db, coverage;
    bool tempo;
  };
  std::vector<Planted> truth;
  const double factors[] = {1.005, 1.01, 1.02, 1.03, 1.04, 25.0 / 24.0};
  const double snrs[] = {0, 3, 6, 10, 20};
  const double coverages[] = {1.0, 0.75, 0.5, 0.3};
  synth::Rng rng(4242);
  // One airing every 100 s: 5 of 6 resampled, the rest unchanged or
  // tempo-changed, in turn.
  const size_t n = static_cast<size_t>(hours * 3600 / 100) - 1;
  for (size_t i = 0; i < n; ++i) {
    const size_t t = i % k;
    Planted p;
    p.id = "spot" + std::to_string(t);
    p.offset_s = 20 + 100.0 * static_cast<double>(i) + rng.uniform(0, 20);
    p.offset_s = std::round(p.offset_s * kRate) / kRate;
    const bool up = (i / 2) % 2 == 0;
    const double f = factors[i % 6];
    p.speed = up ? f : 1 / f;
    p.snr_db = snrs[(i / 3) % 5];
    p.coverage = coverages[(i / 7) % 4];
    p.tempo = false;
    if (i % 6 == 5) {
      // Every sixth: unchanged, or tempo-only at 2 % or 4 % (either way).
      const int which = static_cast<int>((i / 6) % 3);
      if (which == 0) p.speed = 1;
      else {
        p.tempo = true;
        const double tf = which == 1 ? 1.02 : 1.04;
        p.speed = up ? tf : 1 / tf;
      }
    }
    auto src = open_audio_file(s.template_paths[t], ChannelChoice{});
    Samples master = decode_all(*src.value(), kRate).value();
    Samples clip = p.tempo ? synth::sox_tempo(master, kRate, p.speed, dir.string()) : resample_all(master, kRate * p.speed, kRate);
    if (clip.empty()) continue;  // sox missing: no tempo airings
    clip.resize(static_cast<size_t>(p.coverage * static_cast<double>(clip.size())));
    const Samples noise = synth::white_noise(clip.size(), synth::rms(clip) * std::pow(10.0, -p.snr_db / 20), 77 + i);
    for (size_t j = 0; j < clip.size(); ++j) clip[j] += noise[j];
    s.plants.push_back({std::make_shared<const Samples>(std::move(clip)), static_cast<int64_t>(std::llround(p.offset_s * kRate)), 0.8f});
    truth.push_back(p);
  }
  RunStats off = run_job(s, {"speed-air"}, hours, 31, synth::Content::programme, costs, 0, false);
  RunStats on = run_job(s, {"speed-air"}, hours, 31, synth::Content::programme, costs, 0, true);
  cache.save(costs);
  std::filesystem::remove_all(dir);
  struct Tally {
    int found = 0, total = 0;
  };
  auto score = [&](const LocateResult& r, bool print) {
    std::vector<bool> used(r.matches.size(), false);
    std::map<std::string, Tally> by;
    std::vector<double> speed_err, off_err_ms;
    Tally target;
    int misses = 0;
    for (const auto& p : truth) {
      const Match* hit = nullptr;
      for (size_t i = 0; i < r.matches.size(); ++i) {
        const auto& m = r.matches[i];
        if (used[i] || m.template_id != p.id || std::fabs(m.offset_s - p.offset_s) > (p.tempo ? 0.25 : 0.01)) continue;
        used[i] = true;
        hit = &m;
        break;
      }
      std::string key = p.tempo ? "tempo-only" : p.speed == 1 ? "unchanged" : "resampled";
      if (p.tempo) key += std::fabs(p.speed - 1) < 0.03 || std::fabs(1 / p.speed - 1) < 0.03 ? " 2 %" : " 4 %";
      by[key].total++;
      if (hit) by[key].found++;
      if (!p.tempo && p.speed != 1) {
        const bool eligible = p.snr_db >= 3 && p.coverage >= 0.5 && std::fabs(p.speed - 1) <= 0.0417 + 1e-9 &&
                              std::fabs(1 / p.speed - 1) <= 0.0417 + 1e-9;
        std::string sub = "resampled " + std::to_string(static_cast<int>(p.snr_db)) + " dB";
        by[sub].total++;
        if (hit) by[sub].found++;
        char cov[64];
        std::snprintf(cov, sizeof cov, "resampled cov %.2f", p.coverage);
        by[cov].total++;
        if (hit) by[cov].found++;
        if (eligible) {
          target.total++;
          if (hit) target.found++;
        }
        if (!hit && print && ++misses <= 10)
          std::printf("    missed: %s at %.3f s, speed %.5f, %.0f dB, coverage %.2f\n", p.id.c_str(), p.offset_s, p.speed,
                      p.snr_db, p.coverage);
        if (hit) {
          speed_err.push_back(std::fabs(hit->speed / p.speed - 1));
          off_err_ms.push_back(std::fabs(hit->offset_s - p.offset_s) * 1e3);
        }
      }
    }
    size_t extra = 0;
    for (bool u : used) extra += u ? 0 : 1;
    if (print) {
      for (const auto& [key, t] : by) std::printf("    %-22s %3d / %3d\n", key.c_str(), t.found, t.total);
      auto mx = [](const std::vector<double>& v) { return v.empty() ? 0.0 : *std::max_element(v.begin(), v.end()); };
      std::printf("    recall, resampled within 4.17 %% (SNR >= 3 dB, coverage >= 0.5): %.1f %% (%d/%d; target >= 95 %%)\n",
                  target.total ? 100.0 * target.found / target.total : 0.0, target.found, target.total);
      std::printf("    speed error max %.5f %% (target <= 0.05 %%), offset error max %.4f ms (target <= 1 ms)\n",
                  mx(speed_err) * 100, mx(off_err_ms));
    }
    return extra;
  };
  std::printf("workload speed: %zu templates x 30 s, %.1f h at 8 kHz, %zu airings\n", k, hours, truth.size());
  std::printf("  %-22s %10s %10s %18s\n", "", "CPU s", "wall s", "other detections");
  const size_t extra_off = score(off.result, false), extra_on = score(on.result, false);
  std::printf("  %-22s %10.1f %10.1f %18zu\n", "speed search off", off.cpu_s, off.wall_s, extra_off);
  std::printf("  %-22s %10.1f %10.1f %18zu\n", "speed search on", on.cpu_s, on.wall_s, extra_on);
  std::printf("  cost on / off = %.2f (CPU; target <= 2.5)\n", on.cpu_s / off.cpu_s);
  std::printf("  found with the search off:\n");
  score(off.result, true);
  std::printf("  found with the search on:\n");
  score(on.result, true);
  return 0;
}

int families(size_t n, bool with_exact) {
  const double rate = 8000;
  std::vector<std::string> ids;
  std::vector<Samples> masters;
  std::vector<size_t> built;  // per master: its family as built, numbered by first member
  size_t n_built = 0;
  for (size_t k = 0; k < n; ++k) {
    const bool sibling = k % 5 >= 3;  // of every 5: 3 alone, then a version of the one before
    if (sibling) {
      Samples m = masters.back();
      const size_t tag_from = m.size() - static_cast<size_t>(3.5 * rate);
      const Samples tag = synth::voice(3.0, rate, 9000 + k);
      std::copy(tag.begin(), tag.end(), m.begin() + static_cast<std::ptrdiff_t>(tag_from));
      masters.push_back(std::move(m));
      built.push_back(built.back());
    } else {
      masters.push_back(synth::spot(20.0 + static_cast<double>(k % 11), rate, 5000 + k));
      built.push_back(n_built++);
    }
    ids.push_back("m" + std::to_string(k));
  }
  auto groups_of = [](const std::vector<size_t>& family_of) {
    std::map<size_t, size_t> size;
    for (size_t f : family_of) ++size[f];
    size_t groups = 0;
    for (const auto& [f, c] : size) groups += c > 1;
    return groups;
  };
  std::printf("workload families: %zu masters of 20-30 s at 8 kHz, %zu pairs, %zu families of 3 as built\n", n,
              n * (n - 1) / 2, groups_of(built));
  auto timed = [&](const FamilyOptions& o, Families& out) {
    const double c0 = cpu_seconds();
    out = find_families(ids, masters, rate, {}, o);
    return cpu_seconds() - c0;
  };
  FamilyOptions exact;
  exact.screen_rate_hz = 0;
  Families a, b;
  const double t_screened = timed(FamilyOptions{}, b);
  const double t_exact = with_exact ? timed(exact, a) : 0.0;
  auto verdict = [&](const Families& f) { return f.family_of == built ? "as built" : "NOT as built"; };
  std::printf("                                   CPU s   families\n");
  if (with_exact)
    std::printf("  every pair exact               %7.2f   %zu, %s\n", t_exact, groups_of(a.family_of), verdict(a));
  else
    std::printf("  every pair exact               (not run: --no-exact)\n");
  std::printf("  screened: one bank at 1 kHz    %7.2f   %zu, %s%s\n", t_screened, groups_of(b.family_of), verdict(b),
              !with_exact ? "" : a.family_of == b.family_of ? ", the same as exact" : ", DIFFERENT from exact");
  if (with_exact) std::printf("  exact / screened = %.1f\n", t_exact / std::max(1e-9, t_screened));
  const bool same = b.family_of == built && (!with_exact || a.family_of == b.family_of);
  return same ? 0 : 1;
}

}  // namespace

int main(int argc, char** argv) {
  CLI::App app{"godwit_bench: engine benchmarks with bounds and peers measured in the same run"};
  app.require_subcommand(1);
  size_t k = 20;
  double hours = 1.0;
  bool no_peers = false;
  std::string cache = default_cache_dir();
  app.add_option("--cache-dir", cache, "FFTW wisdom and FFT costs (as godwit locate)");
  auto* tp = app.add_subcommand("throughput", "engine vs FFT bound vs scipy and OpenCV");
  tp->add_option("--templates", k, "templates of 30 s (default 20)");
  tp->add_option("--hours", hours, "recording length in hours (default 1)");
  tp->add_flag("--no-peers", no_peers, "skip the Python peers");
  int threads = 0;
  tp->add_option("--threads", threads, "engine threads (default: one per core)");
  size_t day_k = 100;
  double day_h = 24;
  auto* dy = app.add_subcommand("day", "a day against 100 templates: wall time and peak memory");
  dy->add_option("--templates", day_k, "templates (default 100)");
  dy->add_option("--hours", day_h, "hours (default 24)");
  bool day_plain = false;
  dy->add_flag("--no-speed-search", day_plain, "plain search only");
  size_t scr_k = 20;
  double scr_h = 1;
  auto* sc = app.add_subcommand("screen", "plain search, full vs screened, beside the FFT bound");
  sc->add_option("--templates", scr_k, "templates of 30 s (default 20)");
  sc->add_option("--hours", scr_h, "hours (default 1)");
  auto* fa = app.add_subcommand("false-alarms", "detections on unrelated audio and on silence");
  double speed_h = 2;
  auto* sp = app.add_subcommand("speed", "speed-changed airings: cost of the speed search and its recall");
  sp->add_option("--hours", speed_h, "hours (default 2)");
  size_t fam_n = 100;
  auto* fm = app.add_subcommand("families", "sibling discovery: every pair exact vs screened by one bank at a low rate");
  fm->add_option("--masters", fam_n, "masters in the library (default 100)");
  bool fam_no_exact = false;
  fm->add_flag("--no-exact", fam_no_exact, "skip scoring every pair exactly (its cost grows with the square)");
  CLI11_PARSE(app, argc, argv);
  if (*fm) return families(fam_n, !fam_no_exact);
  if (*sc) return screen(scr_k, scr_h, cache);
  if (*tp) return throughput(k, hours, cache, !no_peers, threads);
  if (*dy) return day(day_k, day_h, cache, !day_plain);
  if (*fa) return false_alarms(cache);
  if (*sp) return speed(cache, speed_h);
  return 2;
}
