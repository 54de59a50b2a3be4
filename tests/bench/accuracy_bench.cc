// accuracy_bench: the project's own generator of degraded broadcast hours
// with ground truth, and a scorer.
//
// A library of fictional spots (one pair of sibling versions) is aired over
// H hour files at 22.05 kHz with one degradation per airing: clean, gain,
// EQ, dynamic compression, noise at 0-20 dB SNR, polarity, truncation,
// straddling the boundary between two hour files, the sibling version, and
// hard negatives (a spot's music bed without its voice), airings resampled
// by 0.5-4.17 % either way (libsoxr; duration and pitch change together) at
// 3-20 dB SNR, some of them cut off, and tempo-only changes of 2 % or 4 %
// (sox's WSOLA `tempo` effect; pitch kept). Every third hour
// is MP3 at 64 kbps. A planned log places most airings (some deliberately
// off their window, some placements never aired). godwit reconcile runs
// in-process; the scorer prints recall by degradation, false alarms per
// hour, timing error, coverage error, version confusions and verdict
// accuracy beside the targets. Not run in CI (minutes of work).
#include <sys/resource.h>

#include <CLI/CLI.hpp>
#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <map>
#include <array>

#include "godwit/civil_time.h"
#include "godwit/reconcile_job.h"
#include "godwit/reconciler.h"
#include "godwit/resampler.h"
#include "godwit/analysis_stream.h"
#include "synth.h"

using namespace godwit;
namespace fs = std::filesystem;

namespace {

constexpr double kRate = 22050;

enum class Kind { clean, gain, eq, compression, noise, polarity, truncated, straddle, sibling, hard_negative, speed, tempo };
const char* kind_name(Kind k) {
  static const char* n[] = {"clean", "gain", "eq", "compression", "noise", "polarity", "truncated", "straddle",
                            "sibling", "hard_negative", "speed", "tempo"};
  return n[static_cast<int>(k)];
}

struct SpotDef {
  std::string id;
  double duration_s;
  Samples bed, full;  // at kRate
};

struct Truth {
  Kind kind;
  std::string spot;       // what aired (for hard negatives: the spot whose bed aired)
  std::string planned_spot;  // placement's spot ("" = unscheduled)
  std::string slot;
  LocalSeconds aired_s = 0;
  LocalSeconds planned_s = 0;
  double window_s = 60;
  double coverage = 1;
  double snr_db = 99;
  double speed = 1;  // speed and tempo kinds: the factor
  bool mp3 = false;
};

Samples make_spot_with_tag(double dur, uint64_t seed, uint64_t tag_seed, Samples* bed_out) {
  Samples bed = synth::music(dur, kRate, seed * 3 + 1);
  synth::set_rms(bed, 0.07);
  if (bed_out) *bed_out = bed;
  Samples v = synth::voice(dur - 5, kRate, seed * 3 + 2);
  Samples tag = synth::voice(4.5, kRate, tag_seed);
  Samples full = bed;
  synth::mix_into(full, v, 0, 1.0);
  synth::mix_into(full, tag, static_cast<size_t>((dur - 4.8) * kRate), 1.0);
  return full;
}

void one_pole_lowpass(Samples& x, double fc) {
  const double a = std::exp(-2 * M_PI * fc / kRate);
  double y = 0;
  for (auto& v : x) v = static_cast<float>(y = (1 - a) * v + a * y);
}

double percentile(std::vector<double> v, double p) {
  if (v.empty()) return 0;
  std::sort(v.begin(), v.end());
  return v[std::min(v.size() - 1, static_cast<size_t>(p * static_cast<double>(v.size())))];
}

}  // namespace

int main(int argc, char** argv) {
  CLI::App app{"accuracy_bench: degraded broadcast hours with ground truth, scored"};
  int hours = 3;
  uint64_t seed = 1;
  std::string keep;
  app.add_option("--hours", hours, "hour files (default 3)");
  app.add_option("--seed", seed, "scenario seed (default 1)");
  app.add_option("--keep", keep, "write the scenario to this folder and keep it");
  CLI11_PARSE(app, argc, argv);
  const fs::path dir = keep.empty() ? fs::temp_directory_path() / ("godwit-accuracy-" + std::to_string(seed)) : fs::path(keep);
  fs::create_directories(dir / "library");
  fs::create_directories(dir / "air");
  synth::Rng rng(seed * 7919);

  // Library.
  std::vector<SpotDef> spots;
  const double durs[] = {10, 15, 20, 30, 30, 30, 45, 60, 20, 30};
  for (size_t i = 0; i < 10; ++i) {
    SpotDef s;
    s.id = "bench-spot-" + std::to_string(i);
    s.duration_s = durs[i];
    // Spots 4 and 5 are siblings: same bed and voice, different tag.
    const uint64_t base = i == 5 ? 4 : i;
    s.full = make_spot_with_tag(durs[i], seed * 100 + base, seed * 1000 + i, &s.bed);
    synth::set_rms(s.full, 0.1);
    synth::write_audio((dir / "library" / (s.id + ".wav")).string(), s.full, 1, kRate);
    spots.push_back(std::move(s));
  }
  std::vector<Truth> truth;
  const LocalSeconds day0 = *parse_iso8601_local("2026-05-20T00:00:00");
  std::vector<std::string> files;
  const Kind kinds[] = {Kind::clean, Kind::gain,  Kind::eq,            Kind::compression, Kind::noise, Kind::polarity,
                        Kind::truncated, Kind::sibling, Kind::hard_negative, Kind::noise, Kind::speed, Kind::speed,
                        Kind::tempo};
  const size_t n_kinds = sizeof kinds / sizeof kinds[0];
  size_t slot_no = 0;
  Samples carry;  // tail of a spot straddling into the next hour
  for (int h = 0; h < hours; ++h) {
    const bool mp3 = h % 3 == 2;
    Samples air = synth::programme(3600, kRate, seed * 10 + static_cast<uint64_t>(h));
    // 24 airings per hour, one per 150 s slot, at a random point in it.
    for (int k = 0; k < 24; ++k) {
      Kind kind = kinds[rng.next() % n_kinds];
      if (k == 23 && h + 1 < hours) kind = Kind::straddle;
      size_t si = rng.next() % spots.size();
      if (kind == Kind::sibling) si = 4 + rng.next() % 2;
      const SpotDef& s = spots[si];
      double start = k * 150.0 + rng.uniform(5, 150 - s.duration_s - 5 > 5 ? 150 - s.duration_s - 5 : 6);
      if (k == 0) start = std::max(start, 65.0);  // clear of the previous hour's straddling tail
      if (kind == Kind::straddle) start = 3600 - s.duration_s * rng.uniform(0.3, 0.7);
      Truth t;
      t.kind = kind;
      t.spot = kind == Kind::sibling ? spots[si == 4 ? 5 : 4].id : s.id;  // the sibling airs
      t.mp3 = mp3;
      const SpotDef& aired = kind == Kind::sibling ? spots[si == 4 ? 5 : 4] : s;
      Samples clip = kind == Kind::hard_negative ? s.bed : aired.full;
      double gain = 1.0;
      switch (kind) {
        case Kind::gain: gain = std::pow(10.0, rng.uniform(-12, 6) / 20); break;
        case Kind::eq: one_pole_lowpass(clip, rng.uniform(2000, 4000)); break;
        case Kind::compression:
          for (auto& v : clip) v = static_cast<float>(std::tanh(4 * v) / 4 * 1.5);
          break;
        case Kind::polarity: gain = -1; break;
        case Kind::truncated: {
          t.coverage = rng.uniform(0.5, 0.95);
          clip.resize(static_cast<size_t>(t.coverage * static_cast<double>(clip.size())));
          break;
        }
        case Kind::speed: {
          // 25/24 is the film-rate change (common practice, from memory).
          const double f = std::array<double, 6>{1.005, 1.01, 1.02, 1.03, 1.04, 25.0 / 24.0}[rng.next() % 6];
          t.speed = rng.uniform() < 0.5 ? f : 1 / f;
          clip = resample_all(clip, kRate * t.speed, kRate);
          if (rng.uniform() < 0.3) {
            t.coverage = rng.uniform(0.5, 0.95);
            clip.resize(static_cast<size_t>(t.coverage * static_cast<double>(clip.size())));
          }
          break;
        }
        case Kind::tempo: {
          const double f = rng.uniform() < 0.5 ? 1.02 : 1.04;
          t.speed = rng.uniform() < 0.5 ? f : 1 / f;
          Samples stretched = synth::sox_tempo(clip, kRate, t.speed, dir.string());
          if (stretched.empty()) {
            t.kind = kind = Kind::clean;  // no sox: a clean airing instead
            t.speed = 1;
          } else {
            clip = std::move(stretched);
          }
          break;
        }
        default: break;
      }
      const size_t at = static_cast<size_t>(start * kRate);
      for (size_t i = 0; i < clip.size() && at + i < air.size(); ++i) air[at + i] = static_cast<float>(gain * clip[i]);
      if (kind == Kind::straddle) t.coverage = 1;  // the rest airs at the top of the next hour
      if (kind == Kind::noise || kind == Kind::speed) {
        t.snr_db = kind == Kind::noise ? std::array<double, 5>{0, 3, 6, 10, 20}[rng.next() % 5]
                                       : std::array<double, 4>{3, 6, 10, 20}[rng.next() % 4];
        const Samples n = synth::white_noise(clip.size(), synth::rms(clip) * std::pow(10.0, -t.snr_db / 20), rng.next());
        for (size_t i = 0; i < n.size() && at + i < air.size(); ++i) air[at + i] += n[i];
      }
      t.aired_s = day0 + h * 3600.0 + static_cast<double>(at) / kRate;
      // The placement: most airings have one; 1 in 8 is unscheduled; hard negatives never.
      if (kind != Kind::hard_negative && rng.uniform() > 0.125) {
        t.planned_spot = s.id;
        t.slot = "P" + std::to_string(++slot_no);
        const double off = rng.uniform() < 0.15 ? rng.uniform(90, 300) * (rng.uniform() < 0.5 ? -1 : 1) : rng.uniform(-40, 40);
        t.planned_s = std::round(t.aired_s + off);
      }
      truth.push_back(t);
      // The rest of a straddling spot opens the next hour.
      if (kind == Kind::straddle) {
        Truth rest = t;
        rest.kind = Kind::clean;
        rest.slot = "";
        rest.planned_spot = "#straddle-rest";
        truth.push_back(rest);
      }
    }
    // Carry the straddling tail into the next hour's programme.
    std::string name = "bench-fm-" + format_iso8601_local(day0 + h * 3600.0, 0).substr(0, 10) + "T" +
                       format_iso8601_local(day0 + h * 3600.0, 0).substr(11, 2) + "0000";
    name.erase(std::remove(name.begin() + 9, name.end(), '-'), name.end());
    const std::string path = (dir / "air" / (name + (mp3 ? ".mp3" : ".flac"))).string();
    files.push_back(path);
    // The tail of the previous hour's straddling spot opens this hour.
    if (!carry.empty()) {
      for (size_t i = 0; i < carry.size() && i < air.size(); ++i) air[i] = carry[i];
      carry.clear();
    }
    const Truth* last = nullptr;
    for (const auto& t : truth)
      if (t.kind == Kind::straddle && t.aired_s >= day0 + h * 3600.0 && t.aired_s < day0 + (h + 1) * 3600.0) last = &t;
    if (last) {
      const auto& sp = *std::find_if(spots.begin(), spots.end(), [&](const SpotDef& x) { return x.id == last->spot; });
      const size_t in_this = static_cast<size_t>((day0 + (h + 1) * 3600.0 - last->aired_s) * kRate);
      if (in_this < sp.full.size()) carry.assign(sp.full.begin() + static_cast<long>(in_this), sp.full.end());
    }
    if (auto err = synth::write_audio(path, air, 1, kRate, 64); !err.empty()) {
      std::fprintf(stderr, "accuracy_bench: %s\n", err.c_str());
      return 1;
    }
    std::fprintf(stderr, "accuracy_bench: wrote %s\n", path.c_str());
  }
  truth.erase(std::remove_if(truth.begin(), truth.end(), [](const Truth& t) { return t.planned_spot == "#straddle-rest"; }),
              truth.end());
  // Planned log, plus placements that never aired.
  std::string log = "slot,spot,planned,window_s\n";
  for (const auto& t : truth)
    if (!t.slot.empty()) log += t.slot + "," + t.planned_spot + "," + format_iso8601_local(t.planned_s, 0) + ",60\n";
  std::vector<std::pair<std::string, std::string>> never;
  const double horizon_s = ReconcileOptions{}.verdicts.horizon_s;
  for (int m = 0; m < hours * 2; ++m) {
    // A placement that never aired: of a spot with no airing of its family
    // within the horizon, so that the truth is unambiguous.
    const LocalSeconds at = day0 + m * 1800.0 + 75;
    for (int tries = 0; tries < 20; ++tries) {
      const std::string& id = spots[rng.next() % spots.size()].id;
      const bool near = std::any_of(truth.begin(), truth.end(), [&](const Truth& t) {
        const bool fam = t.spot == id || ((id == "bench-spot-4" || id == "bench-spot-5") &&
                                          (t.spot == "bench-spot-4" || t.spot == "bench-spot-5"));
        return fam && t.kind != Kind::hard_negative && std::fabs(t.aired_s - at) <= horizon_s + 60;
      });
      if (near) continue;
      const std::string slot = "N" + std::to_string(m);
      never.emplace_back(slot, id);
      log += slot + "," + id + "," + format_iso8601_local(at, 0) + ",30\n";
      break;
    }
  }
  std::ofstream(dir / "planned.csv") << log;

  // Run.
  ReconcileJob job;
  for (const auto& s : spots) job.masters.push_back((dir / "library" / (s.id + ".wav")).string());
  for (const auto& f : files) job.recordings.push_back({f, std::nullopt});
  job.log = parse_planned_log(log, 60).value();
  ReconcileOptions o;
  o.locate.correlator.planner = Planner::estimate;
  const auto t0 = std::chrono::steady_clock::now();
  auto res = run_reconcile(job, o);
  const double wall = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
  if (!res) {
    std::fprintf(stderr, "accuracy_bench: %s\n", res.error().describe().c_str());
    return 1;
  }
  const auto& r = res.value();

  // Score detections against airings.
  std::map<std::string, std::pair<int, int>> by_kind;  // found, total (eligible)
  std::vector<double> timing_ms, cov_err, speed_err, speed_timing_ms;
  int false_alarms = 0, version_conf = 0, hard_neg_hits = 0;
  int speed_found = 0, speed_total = 0, tempo_found = 0, tempo_total = 0;
  std::vector<bool> used(r.airings.size(), false);
  for (const auto& t : truth) {
    // Find the airing record nearest in time (within 0.5 s) of the same family.
    int best = -1;
    for (size_t i = 0; i < r.airings.size(); ++i) {
      const auto& a = r.airings[i];
      if (used[i] || std::fabs(a.aired_s - t.aired_s) > 0.5) continue;
      const bool fam = a.spot == t.spot || (a.spot.rfind("bench-spot-4", 0) == 0 || a.spot.rfind("bench-spot-5", 0) == 0) ==
                                               (t.spot == "bench-spot-4" || t.spot == "bench-spot-5");
      if (!fam && t.kind != Kind::hard_negative) continue;
      if (best < 0 || std::fabs(a.aired_s - t.aired_s) < std::fabs(r.airings[best].aired_s - t.aired_s)) best = static_cast<int>(i);
    }
    if (t.kind == Kind::hard_negative) {
      if (best >= 0) {
        used[best] = true;
        ++hard_neg_hits;
        const auto& a = r.airings[best];
        double sum = 0;
        int n = 0;
        for (size_t q = 0; q < a.profile.scores.size(); ++q)
          if (a.profile.aired[q]) sum += a.profile.scores[q], ++n;
        std::printf("  hard negative detected: bed of %s at %s, score %.3f, aired-seconds mean %.3f\n", t.spot.c_str(),
                    format_iso8601_local(t.aired_s, 3).c_str(), a.score, n ? sum / n : 0.0);
      }
      by_kind[kind_name(t.kind)].second++;
      if (best < 0) by_kind[kind_name(t.kind)].first++;  // "found" = correctly rejected
      continue;
    }
    // Tempo-only changes have their own line; they are not in the target.
    const bool eligible = t.coverage >= 0.5 && t.snr_db >= 3 && t.kind != Kind::tempo;
    std::string key = kind_name(t.kind);
    if (t.kind == Kind::noise) key += " " + std::to_string(static_cast<int>(t.snr_db)) + " dB";
    if (t.kind == Kind::tempo) key += std::fabs(t.speed - 1) < 0.03 || std::fabs(1 / t.speed - 1) < 0.03 ? " 2 %" : " 4 %";
    if (t.kind == Kind::speed) {
      ++speed_total;
      if (best >= 0) {
        ++speed_found;
        speed_err.push_back(std::fabs(r.airings[best].speed / t.speed - 1));
        speed_timing_ms.push_back(std::fabs(r.airings[best].aired_s - t.aired_s) * 1e3);
      }
    }
    if (t.kind == Kind::tempo) {
      ++tempo_total;
      if (best >= 0) ++tempo_found;
    }
    if (t.mp3) key += " +mp3";
    auto& bk = by_kind[key];
    bk.second++;
    if (best >= 0) {
      used[best] = true;
      bk.first++;
      const auto& a = r.airings[best];
      if (eligible) timing_ms.push_back(std::fabs(a.aired_s - t.aired_s) * 1e3);
      cov_err.push_back(std::fabs(a.coverage - t.coverage));
      const bool undetermined = std::find(a.undetermined_among.begin(), a.undetermined_among.end(), t.spot) != a.undetermined_among.end();
      if (a.spot != t.spot && !undetermined) ++version_conf;
    }
  }
  for (bool u : used) false_alarms += u ? 0 : 1;

  // Expected verdicts from the truth, by the documented rules.
  int verdict_ok = 0, verdict_n = 0;
  std::map<std::string, const Truth*> by_slot;
  for (const auto& t : truth)
    if (!t.slot.empty()) by_slot[t.slot] = &t;
  std::vector<std::string> wrong;
  for (const auto& v : r.verdicts) {
    const auto& p = r.placements[v.placement];
    std::string want = "missing";
    if (auto it = by_slot.find(p.slot); it != by_slot.end()) {
      const Truth& t = *it->second;
      const double dev = t.aired_s - t.planned_s;
      if (t.spot != t.planned_spot) want = "wrong_version";
      else if (t.coverage < 0.9) want = "partial";
      else if (dev < -p.window_s) want = "early";
      else if (dev > p.window_s) want = "late";
      else want = "aired";
      if (t.snr_db < 3 || t.kind == Kind::tempo) continue;  // outside the target's conditions
    }
    ++verdict_n;
    if (want == verdict_name(v.status)) ++verdict_ok;
    else if (wrong.size() < 8) {
      std::string detail = p.slot + " (" + p.spot + " planned " + format_iso8601_local(p.planned_s, 0) + ") want " + want +
                           " got " + verdict_name(v.status);
      if (v.airing) detail += " with the airing at " + format_iso8601_local(r.airings[*v.airing].aired_s, 3);
      if (auto it = by_slot.find(p.slot); it != by_slot.end())
        detail += "; truth aired " + format_iso8601_local(it->second->aired_s, 3) + " " + kind_name(it->second->kind);
      wrong.push_back(detail);
    }
  }

  rusage ru{};
  getrusage(RUSAGE_SELF, &ru);
  std::printf("accuracy: %d hour(s) at 22.05 kHz (every third as MP3 64 kbps), %zu airings, %zu placements, seed %llu\n",
              hours, truth.size(), r.placements.size(), static_cast<unsigned long long>(seed));
  std::printf("  reconcile wall %.1f s, peak RSS %.0f MiB\n", wall, static_cast<double>(ru.ru_maxrss) / 1024);
  std::printf("  %-26s %7s   (hard_negative: correctly not detected)\n", "recall by degradation", "found");
  int elig_found = 0, elig_total = 0;
  for (const auto& [k, v] : by_kind) {
    std::printf("  %-26s %3d/%-3d\n", k.c_str(), v.first, v.second);
  }
  for (const auto& t : truth) {
    if (t.kind == Kind::hard_negative || t.kind == Kind::tempo || t.coverage < 0.5 || t.snr_db < 3) continue;
    ++elig_total;
  }
  for (const auto& [k, v] : by_kind)
    if (k != "hard_negative" && k.find(" 0 dB") == std::string::npos && k.rfind("tempo", 0) != 0) elig_found += v.first;
  std::printf("  recall (coverage >= 0.5, SNR >= 3 dB): %.1f %% (%d/%d)          target >= 99 %%\n",
              100.0 * elig_found / std::max(1, elig_total), elig_found, elig_total);
  std::printf("  false alarms: %d in %d h = %.2f per hour (%d on hard negatives)   target <= 0.1 per hour\n",
              false_alarms + hard_neg_hits, hours, double(false_alarms + hard_neg_hits) / hours, hard_neg_hits);
  std::printf("  timing error: median %.3f ms, p95 %.3f ms, max %.3f ms          targets 0.2 / 1 ms\n",
              percentile(timing_ms, 0.5), percentile(timing_ms, 0.95), percentile(timing_ms, 1.0));
  std::printf("  coverage error: median %.3f, max %.3f                          target within 0.05\n",
              percentile(cov_err, 0.5), percentile(cov_err, 1.0));
  std::printf("  version confusions: %d                                         target 0\n", version_conf);
  std::printf("  resampled airings: recall %.1f %% (%d/%d), speed error max %.4f %%, timing error max %.3f ms   targets >= 95 %%, 0.05 %%, 1 ms\n",
              100.0 * speed_found / std::max(1, speed_total), speed_found, speed_total, percentile(speed_err, 1.0) * 100,
              percentile(speed_timing_ms, 1.0));
  std::printf("  tempo-only changes (pitch kept): recall %.1f %% (%d/%d)       measured, no target\n",
              100.0 * tempo_found / std::max(1, tempo_total), tempo_found, tempo_total);
  std::printf("  verdict accuracy: %.1f %% (%d/%d)                              target >= 99 %%\n",
              100.0 * verdict_ok / std::max(1, verdict_n), verdict_ok, verdict_n);
  for (const auto& w : wrong) std::printf("    %s\n", w.c_str());
  if (keep.empty()) fs::remove_all(dir);
  return 0;
}
