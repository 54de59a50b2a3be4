// Over 400 lines: the day's generator, its ground truth and the scoring belong together.
// accuracy_bench: broadcast days through a realistic air chain, with
// ground truth, searched by `locate` and `reconcile` and scored.
//
// The day (tools/air_day.h) compounds degradations on every airing:
// resampling to the logger's rate, speed changes, truncation, EQ or a
// telephone band, fast compression, gain, polarity, crossfades, coloured
// noise down to 0 dB SNR, a limiter, and the file's codec (FLAC, WAV, MP3
// 64-128 kbps at 22.05-48 kHz, mono or stereo, mixed within the day), with
// straddles across files of different rates and codecs, sibling versions,
// hard negatives and airings cut by the recordings' edges. The scorer
// prints recall by condition, precision and false alarms by kind for both
// commands, version confusions, timing, speed and coverage errors and
// verdict accuracy, each beside its target. Not run in CI (minutes of
// work); `--hours 0.67` makes a small day.
#include <sys/resource.h>

#include <CLI/CLI.hpp>
#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <map>
#include <set>

#include "air_day.h"
#include "godwit/compliance/civil_time.h"
#include "godwit/compliance/reconcile_job.h"
#include "godwit/compliance/reconciler.h"
#include "godwit/compliance/timeline_locate.h"

using namespace godwit;
using namespace godwit::synth;
namespace fs = std::filesystem;

namespace {

double percentile(std::vector<double> v, double p) {
  if (v.empty()) return 0;
  std::sort(v.begin(), v.end());
  return v[std::min(v.size() - 1, static_cast<size_t>(p * static_cast<double>(v.size())))];
}

std::string snr_band(double snr_db) {
  if (snr_db < 1.5) return "SNR 0-1.5 dB";
  if (snr_db < 3) return "SNR 1.5-3 dB";
  if (snr_db < 6) return "SNR 3-6 dB";
  if (snr_db < 10) return "SNR 6-10 dB";
  return "SNR 10-20 dB";
}

// Recall bookkeeping by condition.
struct Tally {
  std::map<std::string, std::pair<int, int>> by;  // condition -> found, total
  void add(const std::vector<std::string>& conditions, bool found) {
    for (const auto& c : conditions) {
      auto& t = by[c];
      t.second++;
      t.first += found ? 1 : 0;
    }
  }
};

struct Scored {
  int eligible = 0, eligible_found = 0, low = 0, low_found = 0;
  int version_confusions = 0, undetermined_with_tag = 0;
  std::vector<double> timing_ms, raw_timing_ms, speed_err, coverage_err;
  // Tempo-changed airings (pitch kept): the target's (SNR >= 6 dB,
  // coverage >= 0.5), their tempo and offset errors; airings at their
  // master's speed and tempo apart, to see that they lost nothing.
  int tempo_target = 0, tempo_target_found = 0, plain = 0, plain_found = 0, tempo_as_speed = 0, speed_as_tempo = 0;
  std::vector<double> tempo_err, tempo_offset_ms;
  int complete_called_partial = 0;  // whole airings (SNR >= 3 dB) with coverage under 0.9
  std::vector<std::pair<double, std::string>> worst_coverage;
  std::map<std::string, int> false_alarms;  // by kind
  int total_reported = 0, true_reported = 0;
  Tally tally;
  std::vector<std::string> misses;
};

bool same_family(const AirDay& day, const std::string& a, const std::string& b) {
  if (a == b) return true;
  const AirMaster *x = nullptr, *y = nullptr;
  for (const auto& m : day.masters) {
    if (m.id == a) x = &m;
    if (m.id == b) y = &m;
  }
  return x && y && !x->family.empty() && x->family == y->family;
}

std::vector<std::string> conditions_of(const Planted& p) {
  std::vector<std::string> c = p.conditions;
  c.push_back(snr_band(p.chain.snr_db));
  c.push_back("all");
  return c;
}

bool eligible(const Planted& p) { return p.coverage >= 0.5 && p.chain.snr_db >= 3; }
bool low_snr(const Planted& p) { return p.coverage >= 0.5 && p.chain.snr_db < 3; }

// A reported detection: spot, wall time of the master's first sample.
struct Reported {
  std::string spot;
  LocalSeconds aired_s = 0;
  double speed = 1, coverage = -1;
  std::vector<std::string> undetermined;
  std::string file;  // locate: the file it was reported in
  double tempo = 1;
};

Scored score(const AirDay& day, const std::vector<Reported>& reported, bool per_file) {
  Scored s;
  s.total_reported = static_cast<int>(reported.size());
  std::vector<int> claimed(reported.size(), -1);
  for (size_t pi = 0; pi < day.planted.size(); ++pi) {
    const Planted& p = day.planted[pi];
    if (p.kind != PlantKind::airing) continue;
    const std::string& spot = day.masters[p.master].id;
    const std::string want_file = p.first_file >= 0 ? day.files[static_cast<size_t>(p.first_file)].path : "";
    int best = -1;
    for (size_t i = 0; i < reported.size(); ++i) {
      const Reported& r = reported[i];
      if (claimed[i] >= 0 || std::fabs(r.aired_s - p.aired_s) > 0.5 || !same_family(day, r.spot, spot)) continue;
      if (per_file && r.file != want_file) continue;
      if (best < 0 || (r.spot == spot && reported[static_cast<size_t>(best)].spot != spot)) best = static_cast<int>(i);
    }
    const bool found = best >= 0;
    if (found) claimed[static_cast<size_t>(best)] = static_cast<int>(pi);
    if (p.chain.tempo != 1 && p.coverage >= 0.5 && p.chain.snr_db >= 6) {
      ++s.tempo_target;
      s.tempo_target_found += found;
    }
    if (eligible(p) && p.chain.time_scale() == 1) {
      ++s.plain;
      s.plain_found += found;
    }
    if (eligible(p)) {
      ++s.eligible;
      s.eligible_found += found;
      s.tally.add(conditions_of(p), found);
      if (!found && s.misses.size() < 12) {
        std::string d = spot + " at " + format_iso8601_local(p.aired_s, 3) + ":";
        for (const auto& c : conditions_of(p))
          if (c != "all") d += " " + c;
        char buf[96];
        std::snprintf(buf, sizeof buf, " (SNR %.1f dB, speed %.4f, tempo %.4f, coverage %.2f)", p.chain.snr_db, p.chain.speed,
                      p.chain.tempo, p.coverage);
        s.misses.push_back(d + buf);
      }
    } else if (low_snr(p)) {
      ++s.low;
      s.low_found += found;
    }
    if (!found) continue;
    const Reported& r = reported[static_cast<size_t>(best)];
    const bool undetermined = std::find(r.undetermined.begin(), r.undetermined.end(), spot) != r.undetermined.end();
    if (r.spot != spot && !undetermined) ++s.version_confusions;
    const AirMaster& m = day.masters[p.master];
    const bool tag_aired = m.family.empty() || p.coverage * m.duration_s >= m.duration_s - 0.5 * m.tag_s;
    if (undetermined && tag_aired && !m.family.empty()) ++s.undetermined_with_tag;
    if (p.chain.tempo != 1) {
      if (r.speed != 1) ++s.tempo_as_speed;
      s.tempo_err.push_back(std::fabs(r.tempo / p.chain.tempo - 1) * 100);
      s.tempo_offset_ms.push_back(std::fabs(r.aired_s - p.aired_s) * 1e3);
    } else if (p.chain.speed != 1 && r.tempo != 1) {
      ++s.speed_as_tempo;
    }
    if (eligible(p) && p.chain.tempo == 1) {
      s.timing_ms.push_back(std::fabs(r.aired_s - p.aired_s - p.chain_delay_s) * 1e3);
      s.raw_timing_ms.push_back(std::fabs(r.aired_s - p.aired_s) * 1e3);
      if (p.chain.speed != 1) s.speed_err.push_back(std::fabs(r.speed / p.chain.speed - 1) * 100);
      if (r.coverage >= 0) s.coverage_err.push_back(std::fabs(r.coverage - p.coverage));
      if (r.coverage >= 0 && p.coverage >= 0.999 && r.coverage < 0.9) ++s.complete_called_partial;
      if (r.coverage >= 0) {
        char buf[200];
        std::snprintf(buf, sizeof buf, "%s at %s: coverage %.3f, truth %.3f (SNR %.1f dB, %s)", spot.c_str(),
                      format_iso8601_local(p.aired_s, 3).c_str(), r.coverage, p.coverage, p.chain.snr_db, p.cut.empty() ? "whole" : p.cut.c_str());
        s.worst_coverage.emplace_back(std::fabs(r.coverage - p.coverage), buf);
      }
    }
  }
  // What the rest of the reports are.
  for (size_t i = 0; i < reported.size(); ++i) {
    if (claimed[i] >= 0) {
      ++s.true_reported;
      continue;
    }
    const Reported& r = reported[i];
    std::string kind = "other";
    for (const auto& p : day.planted) {
      const AirMaster& m = day.masters[p.master];
      const double start = p.kind == PlantKind::tag_only ? p.aired_s - (m.duration_s - m.tag_s) : p.aired_s;
      if (std::fabs(r.aired_s - start) > std::max(0.5, 0.5 * m.duration_s)) continue;
      if (p.kind != PlantKind::airing) {
        kind = std::string("hard negative: ") + plant_kind_name(p.kind);
        break;
      }
      if (!same_family(day, r.spot, m.id)) continue;
      if (std::fabs(r.aired_s - p.aired_s) <= 0.5) kind = r.spot == m.id ? "twin of a straddle or duplicate" : "sibling beside the airing";
      else kind = "duplicate near an airing";
      break;
    }
    s.false_alarms[kind]++;
  }
  return s;
}

void print_scored(const char* what, const Scored& s, double hours, bool per_condition) {
  std::printf("\n== %s\n", what);
  std::printf("  recall (coverage >= 0.5, SNR >= 3 dB): %.1f %% (%d/%d)        target >= 99 %%\n",
              100.0 * s.eligible_found / std::max(1, s.eligible), s.eligible_found, s.eligible);
  std::printf("  recall (coverage >= 0.5, SNR 0-3 dB):  %.1f %% (%d/%d)        target >= 90 %%\n",
              100.0 * s.low_found / std::max(1, s.low), s.low_found, s.low);
  int fa = 0;
  for (const auto& [k, n] : s.false_alarms) fa += n;
  std::printf("  precision: %.1f %% (%d of %d reports are airings)            target >= 99 %%\n",
              100.0 * s.true_reported / std::max(1, s.total_reported), s.true_reported, s.total_reported);
  std::printf("  false alarms: %d = %.2f per hour                               target <= 0.2 per hour\n", fa,
              fa / std::max(1e-9, hours));
  for (const auto& [k, n] : s.false_alarms) std::printf("    %-34s %d\n", k.c_str(), n);
  std::printf("  version confusions: %d                                          target 0\n", s.version_confusions);
  std::printf("  undetermined version though the tag aired: %d\n", s.undetermined_with_tag);
  std::printf("  timing error: median %.3f ms, p95 %.3f ms, max %.3f ms           targets 0.2 / 1 ms\n",
              percentile(s.timing_ms, 0.5), percentile(s.timing_ms, 0.95), percentile(s.timing_ms, 1.0));
  std::printf("    (against the master's first sample, the chain's filter delay included: median %.3f, p95 %.3f, max %.3f ms)\n",
              percentile(s.raw_timing_ms, 0.5), percentile(s.raw_timing_ms, 0.95), percentile(s.raw_timing_ms, 1.0));
  std::printf("  speed error (speed-changed): median %.4f %%, max %.4f %%          target <= 0.05 %%\n",
              percentile(s.speed_err, 0.5), percentile(s.speed_err, 1.0));
  std::printf("  recall, tempo-changed (pitch kept; SNR >= 6 dB, coverage >= 0.5): %.1f %% (%d/%d)   target >= 95 %%\n",
              100.0 * s.tempo_target_found / std::max(1, s.tempo_target), s.tempo_target_found, s.tempo_target);
  std::printf("  recall, at the master's speed and tempo (coverage >= 0.5, SNR >= 3 dB): %.1f %% (%d/%d)\n",
              100.0 * s.plain_found / std::max(1, s.plain), s.plain_found, s.plain);
  std::printf("  tempo error (tempo-changed, found): median %.4f %%, max %.4f %%     target <= 0.2 %%\n",
              percentile(s.tempo_err, 0.5), percentile(s.tempo_err, 1.0));
  std::printf("  offset error (tempo-changed, found): median %.2f ms, p95 %.2f ms, max %.2f ms   target <= 20 ms\n",
              percentile(s.tempo_offset_ms, 0.5), percentile(s.tempo_offset_ms, 0.95), percentile(s.tempo_offset_ms, 1.0));
  std::printf("  tempo changes reported as speed changes: %d; speed changes reported as tempo: %d   target 0\n",
              s.tempo_as_speed, s.speed_as_tempo);
  if (!s.coverage_err.empty())
    std::printf("  coverage error: median %.3f, p95 %.3f, max %.3f                  target <= 0.05\n"
                "  complete airings with coverage under 0.9: %d                       target 0\n",
                percentile(s.coverage_err, 0.5), percentile(s.coverage_err, 0.95), percentile(s.coverage_err, 1.0),
                s.complete_called_partial);
  if (!s.worst_coverage.empty()) {
    auto w = s.worst_coverage;
    std::sort(w.rbegin(), w.rend());
    for (size_t i = 0; i < w.size() && i < 4 && w[i].first > 0.05; ++i) std::printf("    %s\n", w[i].second.c_str());
  }
  if (per_condition) {
    std::printf("  recall by condition (coverage >= 0.5, SNR >= 3 dB):\n");
    for (const auto& [k, v] : s.tally.by) std::printf("    %-26s %3d/%-3d\n", k.c_str(), v.first, v.second);
  }
  if (!s.misses.empty()) std::printf("  missed (first %zu):\n", s.misses.size());
  for (const auto& m : s.misses) std::printf("    %s\n", m.c_str());
}

}  // namespace

int main(int argc, char** argv) {
  CLI::App app{"accuracy_bench: broadcast days through a realistic air chain, scored against their ground truth"};
  double hours = 6, file_min = 20;
  uint64_t seed = 1;
  std::string keep;
  bool no_locate = false, verbose = false, reuse = false;
  double threshold = -1, floor_k = -1, min_airing = -1, deficit = -1;
  bool no_tempo_fit = false;
  double tempo_odds = -1;
  app.add_option("--hours", hours, "length of the day in hours (default 6)");
  app.add_option("--file-min", file_min, "length of each recording in minutes (default 20)");
  app.add_option("--seed", seed, "scenario seed (default 1)");
  app.add_option("--keep", keep, "write the scenario to this folder and keep it");
  app.add_flag("--no-locate", no_locate, "score reconcile only");
  app.add_flag("--reuse", reuse, "with --keep: reuse the audio a previous run with the same seed and options wrote there");
  app.add_flag("--verbose", verbose, "list every planted airing and hard negative with what each command reported there");
  app.add_option("--threshold", threshold, "engine --threshold (default: the engine's)");
  app.add_option("--floor-k", floor_k, "engine --floor-k (default: the engine's)");
  app.add_option("--min-airing-score", min_airing, "reconcile's min_airing_score (default: the engine's)");
  app.add_option("--max-foreground-deficit", deficit, "reconcile's max_foreground_deficit (default: the engine's)");
  app.add_option("--tempo-odds", tempo_odds,
                 "share of airings at their master's speed that a stretcher changes the tempo of (default 0.15; more for "
                 "a closer look at them)")
      ->check(CLI::Range(0.0, 1.0));
  bool screen = false;
  double screen_threshold = -1;
  app.add_flag("--screen", screen, "screened search (screen_options.h) instead of the full one");
  app.add_option("--screen-threshold", screen_threshold, "with --screen: its threshold (default: the engine's)");
  app.add_flag("--no-tempo-fit", no_tempo_fit, "engine without the tempo fit (speed search only), for a before/after on one seed");
  double negative_odds = AirDayOptions{}.negative_odds;
  app.add_option("--negative-odds", negative_odds,
                 "share of programme stretches holding a hard negative (default 0.4; 1 for a day to study them)")
      ->check(CLI::Range(0.0, 1.0));
  CLI11_PARSE(app, argc, argv);
  const fs::path dir = keep.empty() ? fs::temp_directory_path() / ("godwit-accuracy-" + std::to_string(seed)) : fs::path(keep);

  AirDayOptions ao;
  ao.hours = hours;
  ao.file_s = file_min * 60;
  ao.seed = seed;
  if (tempo_odds >= 0) ao.odds.tempo = tempo_odds;
  ao.reuse = reuse && !keep.empty();
  ao.negative_odds = negative_odds;
  ao.dir = dir.string();
  ao.log = [](const std::string& s) { std::fprintf(stderr, "accuracy_bench: %s\n", s.c_str()); };
  std::string err;
  const auto t_synth = std::chrono::steady_clock::now();
  auto made = make_air_day(ao, &err);
  if (!made) {
    std::fprintf(stderr, "accuracy_bench: %s\n", err.c_str());
    return 1;
  }
  const AirDay& day = *made;
  const double synth_s = std::chrono::duration<double>(std::chrono::steady_clock::now() - t_synth).count();

  // reconcile, in-process, as `godwit reconcile` runs it.
  ReconcileJob job;
  for (const auto& m : day.masters) job.masters.push_back(m.path);
  for (const auto& f : day.files) job.recordings.push_back({f.path, std::nullopt});
  job.log = parse_planned_log(day.planned_log, 60).value();
  ReconcileOptions o;
  o.locate.correlator.planner = Planner::estimate;
  if (threshold >= 0) o.locate.picker.threshold = threshold;
  if (floor_k >= 0) o.locate.picker.floor_k = floor_k;
  if (min_airing >= 0) o.min_airing_score = min_airing;
  if (deficit >= 0) o.max_foreground_deficit = deficit;
  if (no_tempo_fit) o.locate.speed.max_tempo_deviation = 0;
  o.locate.screen.enabled = screen;
  if (screen_threshold >= 0) o.locate.screen.threshold = screen_threshold;
  auto cpu_s = [] {
    rusage u{};
    getrusage(RUSAGE_SELF, &u);
    return static_cast<double>(u.ru_utime.tv_sec + u.ru_stime.tv_sec) + 1e-6 * static_cast<double>(u.ru_utime.tv_usec + u.ru_stime.tv_usec);
  };
  const double cpu0 = cpu_s();
  auto t0 = std::chrono::steady_clock::now();
  auto res = run_reconcile(job, o);
  const double rec_wall = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
  const double rec_cpu = cpu_s() - cpu0;
  double loc_cpu = 0;
  if (!res) {
    std::fprintf(stderr, "accuracy_bench: %s\n", res.error().describe().c_str());
    return 1;
  }
  const auto& r = res.value();

  // locate over the same files.
  std::optional<LocateResult> loc;
  double loc_wall = 0;
  if (!no_locate) {
    LocateJob lj;
    for (const auto& m : day.masters) lj.templates.push_back(m.path);
    for (const auto& f : day.files) lj.recordings.push_back(f.path);
    t0 = std::chrono::steady_clock::now();
    const double c0 = cpu_s();
    auto l = run_locate_job(lj, o.locate);
    loc_cpu = cpu_s() - c0;
    loc_wall = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
    if (!l) {
      std::fprintf(stderr, "accuracy_bench: %s\n", l.error().describe().c_str());
      return 1;
    }
    loc = std::move(l.value());
  }

  rusage ru{};
  getrusage(RUSAGE_SELF, &ru);
  int n_air = 0, n_neg = 0;
  std::map<std::string, int> codecs;
  for (const auto& p : day.planted) (p.kind == PlantKind::airing ? n_air : n_neg)++;
  for (const auto& f : day.files) codecs[f.codec + "@" + std::to_string(static_cast<int>(f.rate_hz / 1000)) + "k"]++;
  std::printf("accuracy (air chain): %.2f h in %zu files, seed %llu; %d airings, %d hard negatives, %zu masters, %zu placements\n",
              hours, day.files.size(), static_cast<unsigned long long>(seed), n_air, n_neg, day.masters.size(),
              r.placements.size());
  std::printf("  files:");
  for (const auto& [c, n] : codecs) std::printf(" %s x%d", c.c_str(), n);
  std::printf("\n  synthesis %.0f s; reconcile wall %.1f s (CPU %.1f s); locate wall %.1f s (CPU %.1f s); peak RSS %.0f MiB\n",
              synth_s, rec_wall, rec_cpu, loc_wall, loc_cpu, static_cast<double>(ru.ru_maxrss) / 1024);
  if (screen && loc)
    std::printf("screen (locate): %zu candidates, %zu spans scored exactly, %zu (span, master) pairs\n",
                loc->screen_candidates, loc->exact_spans, loc->exact_span_masters);
  std::printf("  tempo fit: %s\n", no_tempo_fit ? "off (--no-tempo-fit)" : "on");
  std::printf("  reproduce: build/tests/bench/accuracy_bench --hours %g --file-min %g --seed %llu\n", hours, file_min,
              static_cast<unsigned long long>(seed));

  std::map<std::string, LocalSeconds> start_of;
  for (const auto& f : day.files) start_of[f.path] = f.start_s;
  std::vector<Reported> rec_reports;
  for (const auto& a : r.airings) rec_reports.push_back({a.spot, a.aired_s, a.speed, a.coverage, a.undetermined_among, a.recording, a.tempo});
  print_scored("reconcile: airings", score(day, rec_reports, false), hours, true);

  if (loc) {
    std::vector<Reported> loc_reports;
    for (const auto& m : loc->matches) {
      std::vector<std::string> undetermined;
      if (m.version_undetermined) {
        undetermined.push_back(m.template_id);
        for (const auto& a : m.alternatives) undetermined.push_back(a.template_id);
      }
      Reported x{m.template_id, start_of[m.recording] + m.offset_s, m.speed, -1, undetermined, m.recording, m.tempo};
      loc_reports.push_back(x);
    }
    print_scored("locate: matches (siblings beside an airing count as false alarms)", score(day, loc_reports, true), hours,
                 false);
  }

  if (verbose) {
    std::printf("\n== every planted item: what reconcile (R) and locate (L) reported within 0.5 s (or overlapping, for negatives)\n");
    for (const auto& p : day.planted) {
      const AirMaster& m = day.masters[p.master];
      std::string line = std::string(plant_kind_name(p.kind)) + " " + m.id + " " + format_iso8601_local(p.aired_s, 3);
      char buf[192];
      std::snprintf(buf, sizeof buf, " snr %.1f speed %.4f tempo %.4f cov %.2f |", p.chain.snr_db, p.chain.speed,
                    p.chain.tempo, p.coverage);
      line += buf;
      for (const auto& c : p.conditions) line += " " + c;
      const double start = p.kind == PlantKind::tag_only ? p.aired_s - (m.duration_s - m.tag_s) : p.aired_s;
      const double tol = p.kind == PlantKind::airing ? 0.5 : 0.5 * m.duration_s + 1;
      for (const auto& a : r.airings)
        if (std::fabs(a.aired_s - start) <= tol) {
          std::snprintf(buf, sizeof buf, "\n     R %s score %.3f cov %.2f speed %.4f tempo %.4f contrast %+.3f shape %.3f dt %+.3f ms",
                        a.spot.c_str(), a.score, a.coverage, a.speed, a.tempo, a.foreground_contrast.value_or(99), a.shape_match.value_or(99),
                        (a.aired_s - start - p.chain_delay_s) * 1e3);
          line += buf;
        }
      for (const auto& x : r.rejected)
        if (std::fabs(x.aired_s - start) <= tol) {
          std::snprintf(buf, sizeof buf, "\n     r %s score %.3f cov %.2f aired %.3f contrast %+.3f shape %.3f (turned down)",
                        x.spot.c_str(), x.score, x.coverage, x.aired_score, x.foreground_contrast.value_or(99),
                        x.shape_match.value_or(99));
          line += buf;
        }
      if (loc) {
        for (const auto& mm : loc->matches)
          if (std::fabs(start_of[mm.recording] + mm.offset_s - start) <= tol) {
            std::snprintf(buf, sizeof buf, "\n     L %s score %.3f speed %.4f tempo %.4f in %s", mm.template_id.c_str(), mm.score,
                          mm.speed, mm.tempo,
                          fs::path(mm.recording).filename().c_str());
            line += buf;
          }
      }
      std::printf("  %s\n", line.c_str());
    }
  }

  // Verdicts expected from the truth, by the documented rules.
  std::map<std::string, const Planted*> by_slot;
  for (const auto& p : day.planted)
    if (!p.slot.empty()) by_slot[p.slot] = &p;
  std::vector<LocalSpan> recorded;  // the day's files, merged
  for (const auto& f : day.files) {
    if (!recorded.empty() && f.start_s <= recorded.back().second + 0.5) recorded.back().second = f.start_s + f.duration_s;
    else recorded.push_back({f.start_s, f.start_s + f.duration_s});
  }
  std::map<std::string, double> length_of;
  for (const auto& m : day.masters) length_of[m.id] = m.duration_s;
  int ok = 0, n = 0, excluded = 0;
  std::map<std::string, int> confusion;
  std::vector<std::string> wrong;
  int missing_unrecorded = 0;  // `missing` though the window was not wholly recorded
  for (const auto& v : r.verdicts) {
    const auto& pl = r.placements[v.placement];
    if (v.status == VerdictStatus::missing &&
        !split_by_cover({pl.planned_s - pl.window_s, pl.planned_s + pl.window_s + length_of[pl.spot]}, recorded).first.empty())
      ++missing_unrecorded;
    std::string want = "missing";
    if (auto it = by_slot.find(pl.slot); it != by_slot.end()) {
      const Planted& p = *it->second;
      if (!eligible(p)) {
        ++excluded;  // outside the target's conditions
        continue;
      }
      const AirMaster& m = day.masters[p.master];
      // Cut by the recordings (their start, end or a gap): what was not
      // recorded is not known to be missing on air.
      const bool cut_on_air = p.cut.empty() || p.cut == "truncated";
      const bool tag_aired = m.family.empty() || p.cut == "recording_start" ||
                             p.coverage * m.duration_s >= m.duration_s - 0.5 * m.tag_s;
      const double dev = p.aired_s - p.planned_s;
      if (m.id != p.planned_spot && tag_aired) want = "wrong_version";
      else if (cut_on_air && p.coverage < 0.9) want = "partial";
      else if (dev < -pl.window_s) want = "early";
      else if (dev > pl.window_s) want = "late";
      else want = "aired";
    } else {  // never aired: missing where its window was recorded
      const auto [out, in] = split_by_cover({pl.planned_s - pl.window_s, pl.planned_s + pl.window_s + length_of[pl.spot]}, recorded);
      if (!out.empty()) want = "not_recorded";
    }
    ++n;
    const std::string got = verdict_name(v.status);
    if (want == got) {
      ++ok;
      continue;
    }
    confusion[want + " -> " + got]++;
    if (wrong.size() < 10) {
      std::string d = pl.slot + " " + pl.spot + " planned " + format_iso8601_local(pl.planned_s, 0) + ": want " + want + ", got " + got;
      if (auto it = by_slot.find(pl.slot); it != by_slot.end())
        d += " (aired " + day.masters[it->second->master].id + " at " + format_iso8601_local(it->second->aired_s, 3) + ")";
      wrong.push_back(d);
    }
  }
  std::printf("\n== reconcile: verdicts\n");
  std::printf("  verdict accuracy: %.1f %% (%d/%d; %d placements outside the conditions left out)   target >= 99 %%\n",
              100.0 * ok / std::max(1, n), ok, n, excluded);
  std::printf("  placements `missing` whose window was not wholly recorded: %d   target 0\n", missing_unrecorded);
  for (const auto& [k, c] : confusion) std::printf("    %-34s %d\n", k.c_str(), c);
  for (const auto& w : wrong) std::printf("    %s\n", w.c_str());

  // The same verdicts judged against what the documented rules
  // (reconciler.h) give when fed the true airings, as a detector that
  // found every airing exactly would: where the generator aired two
  // placements of one spot (or family) the other way round from the
  // nearest pairing, no audio and no log can tell which airing served
  // which, and the rules' pairing is the one a person would defend.
  // Scored over the same placements as above.
  {
    std::vector<AiringRef> truth;
    std::vector<const Planted*> truth_of;
    for (const auto& p : day.planted) {
      if (p.kind != PlantKind::airing || p.coverage <= 0) continue;
      const AirMaster& m = day.masters[p.master];
      AiringRef a;
      a.spot = m.id;
      a.aired_s = p.aired_s;
      // What was not recorded is not held against the airing (reconcile_job.cc).
      a.coverage = (p.cut.empty() || p.cut == "truncated") ? p.coverage : 1.0;
      const bool tag_aired = m.family.empty() || p.cut == "recording_start" ||
                             p.coverage * m.duration_s >= m.duration_s - 0.5 * m.tag_s;
      if (!tag_aired)
        for (const auto& other : day.masters)
          if (other.family == m.family) a.undetermined_among.push_back(other.id);
      truth.push_back(std::move(a));
      truth_of.push_back(&p);
    }
    VerdictContext ctx;
    for (const auto& m : day.masters) ctx.library_length_s[m.id] = m.duration_s;
    ctx.recorded = recorded;
    const Reconciliation ideal = reconcile(
        r.placements, truth, [&](const std::string& a, const std::string& b) { return a != b && same_family(day, a, b); },
        o.verdicts, ctx);
    int ok2 = 0, n2 = 0;
    std::vector<std::string> wrong2;
    for (const auto& v : r.verdicts) {
      const auto& pl = r.placements[v.placement];
      if (auto it = by_slot.find(pl.slot); it != by_slot.end() && !eligible(*it->second)) continue;
      ++n2;
      const std::string want = verdict_name(ideal.verdicts[v.placement].status), got = verdict_name(v.status);
      if (want == got) ++ok2;
      else if (wrong2.size() < 10)
        wrong2.push_back(pl.slot + " " + pl.spot + " planned " + format_iso8601_local(pl.planned_s, 0) + ": rules give " +
                         want + ", got " + got);
    }
    std::printf("  verdicts against the rules applied to the true airings: %.1f %% (%d/%d)   target >= 99 %%\n",
                100.0 * ok2 / std::max(1, n2), ok2, n2);
    for (const auto& w : wrong2) std::printf("    %s\n", w.c_str());
    // Unscheduled by the rules on the true airings, against reconcile's.
    int ideal_n = 0, ideal_found = 0, right = 0;
    std::vector<bool> used(r.unscheduled.size(), false);
    std::vector<std::string> notes;
    for (size_t t : ideal.unscheduled) {
      const Planted& p = *truth_of[t];
      if (!eligible(p)) continue;
      ++ideal_n;
      bool found = false;
      for (size_t k = 0; k < r.unscheduled.size() && !found; ++k) {
        const auto& a = r.airings[r.unscheduled[k]];
        if (used[k] || std::fabs(a.aired_s - p.aired_s) > 0.5 || !same_family(day, a.spot, day.masters[p.master].id)) continue;
        used[k] = found = true;
      }
      ideal_found += found;
      if (!found) notes.push_back("not reported unscheduled: " + day.masters[p.master].id + " at " + format_iso8601_local(p.aired_s, 3));
    }
    for (size_t k = 0; k < r.unscheduled.size(); ++k) {
      bool ok_k = used[k];
      const auto& a = r.airings[r.unscheduled[k]];
      for (size_t t : ideal.unscheduled)  // one outside the conditions is still right
        ok_k = ok_k || (std::fabs(a.aired_s - truth_of[t]->aired_s) <= 0.5 &&
                        same_family(day, a.spot, day.masters[truth_of[t]->master].id));
      right += ok_k;
      if (!ok_k) notes.push_back("reported unscheduled, the rules do not: " + a.spot + " at " + format_iso8601_local(a.aired_s, 3));
    }
    std::printf("  unscheduled against the rules on the true airings: recall %.1f %% (%d/%d)   precision %.1f %% (%d of %zu)   targets >= 98 %%\n",
                100.0 * ideal_found / std::max(1, ideal_n), ideal_found, ideal_n,
                100.0 * right / static_cast<double>(std::max<size_t>(1, r.unscheduled.size())), right, r.unscheduled.size());
    for (size_t i = 0; i < notes.size() && i < 8; ++i) std::printf("    %s\n", notes[i].c_str());
  }

  // Unscheduled airings: planted airings no placement names, against the
  // airings reconcile left unscheduled.
  int truly_unscheduled = 0, found_unscheduled = 0, right_unscheduled = 0;
  std::vector<std::string> unscheduled_notes;
  std::vector<bool> reported_used(r.unscheduled.size(), false);
  for (const auto& p : day.planted) {
    if (p.kind != PlantKind::airing || !p.slot.empty() || !eligible(p)) continue;
    ++truly_unscheduled;
    const int before = found_unscheduled;
    for (size_t k = 0; k < r.unscheduled.size(); ++k) {
      const auto& a = r.airings[r.unscheduled[k]];
      if (reported_used[k] || std::fabs(a.aired_s - p.aired_s) > 0.5 || !same_family(day, a.spot, day.masters[p.master].id))
        continue;
      reported_used[k] = true;
      ++found_unscheduled;
      break;
    }
    if (found_unscheduled == before)
      unscheduled_notes.push_back("not reported unscheduled: " + day.masters[p.master].id + " at " + format_iso8601_local(p.aired_s, 3));
  }
  for (size_t k = 0; k < r.unscheduled.size(); ++k) {
    const auto& a = r.airings[r.unscheduled[k]];
    bool right = reported_used[k];
    for (const auto& p : day.planted)  // an unscheduled airing outside the target's conditions is still right
      right = right || (p.kind == PlantKind::airing && p.slot.empty() && !eligible(p) &&
                        std::fabs(a.aired_s - p.aired_s) <= 0.5 && same_family(day, a.spot, day.masters[p.master].id));
    right_unscheduled += right;
    if (!right) unscheduled_notes.push_back("reported unscheduled, but it is not: " + a.spot + " at " + format_iso8601_local(a.aired_s, 3));
  }
  std::printf("  unscheduled recall: %.1f %% (%d/%d)   precision: %.1f %% (%d of %zu reported)   targets >= 98 %%\n",
              100.0 * found_unscheduled / std::max(1, truly_unscheduled), found_unscheduled, truly_unscheduled,
              100.0 * right_unscheduled / static_cast<double>(std::max<size_t>(1, r.unscheduled.size())), right_unscheduled, r.unscheduled.size());
  for (size_t i = 0; i < unscheduled_notes.size() && i < 8; ++i) std::printf("    %s\n", unscheduled_notes[i].c_str());
  if (keep.empty()) fs::remove_all(dir);
  return 0;
}
