// Over 400 lines: one day is made in the order it airs (schedule, placements, chains, files), its ground truth written as its audio is.
#include "air_day.h"

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <map>

#include "godwit/audio/resampler.h"

namespace godwit::synth {
namespace fs = std::filesystem;
namespace {

constexpr double kProgrammeRate = 16000;  // programme synthesized here, then resampled to the file's rate

struct SpotSpec {
  const char* id;
  const char* family;
  double duration_s;
  uint64_t base;  // siblings share it: bed and voice
};

// Fictional businesses of the benchmark's station.
const SpotSpec kSpots[] = {
    {"harbourside-dental", "", 10, 1},          {"copperfield-hardware", "", 15, 2},
    {"larkspur-florist", "", 20, 3},            {"ninefold-insurance", "", 30, 4},
    {"westmoor-cinema", "", 30, 5},             {"quayside-fishmonger", "", 30, 6},
    {"tallis-pianos", "", 45, 7},               {"orchard-lane-cider", "", 60, 8},
    {"riverbend-auto-spring", "riverbend-auto", 30, 9}, {"riverbend-auto-summer", "riverbend-auto", 30, 9},
    {"riverbend-auto-autumn", "riverbend-auto", 30, 9}, {"elmfield-market-weekday", "elmfield-market", 20, 10},
    {"elmfield-market-weekend", "elmfield-market", 20, 10}, {"pinecrest-travel", "", 30, 11},
};
constexpr size_t kNeverAired = 13;  // pinecrest-travel: placed, never aired

AirMaster make_master(const SpotSpec& s, size_t index, uint64_t seed) {
  AirMaster m;
  m.id = s.id;
  m.family = s.family;
  m.duration_s = s.duration_s;
  // Made at 48 kHz (siblings must share their audio sample for sample),
  // then every other master delivered at 44.1 kHz.
  m.rate_hz = 48000;
  Rng rng(seed * 131 + index);
  m.bed = music(s.duration_s, m.rate_hz, seed * 100 + s.base * 3 + 1);
  set_rms(m.bed, 0.07);
  Samples full = m.bed;
  const bool family = *s.family != 0;
  m.tag_s = family ? rng.uniform(3, 6) : 0;
  const double voice_s = family ? s.duration_s - m.tag_s - 0.3 : s.duration_s - 1;
  mix_into(full, voice(voice_s, m.rate_hz, seed * 100 + s.base * 3 + 2), static_cast<size_t>(0.3 * m.rate_hz), 1.0);
  if (family) {
    m.tag = voice(m.tag_s - 0.2, m.rate_hz, seed * 1000 + index);
    mix_into(full, m.tag, static_cast<size_t>((s.duration_s - m.tag_s) * m.rate_hz), 1.0);
  }
  set_rms(full, 0.1);
  m.audio = std::move(full);
  if (index % 2) {
    m.audio = resample_all(m.audio, 48000, 44100);
    m.bed = resample_all(m.bed, 48000, 44100);
    if (!m.tag.empty()) m.tag = resample_all(m.tag, 48000, 44100);
    m.rate_hz = 44100;
  }
  return m;
}

std::string file_name(LocalSeconds t, const std::string& ext) {
  std::string iso = format_iso8601_local(t, 0);  // 2026-05-20T06:00:00
  std::string compact;
  for (char c : iso)
    if (c != '-' && c != ':') compact += c;
  return "bench-fm-" + compact + "." + ext;
}

// Weight of a clip sample: fades in over fade_in_s, out over fade_out_s.
double crossfade_weight(size_t i, size_t n, double rate_hz, double fade_in_s, double fade_out_s) {
  const double t = static_cast<double>(i) / rate_hz, left = static_cast<double>(n - i) / rate_hz;
  double w = 1;
  if (fade_in_s > 0 && t < fade_in_s) w = std::min(w, t / fade_in_s);
  if (fade_out_s > 0 && left < fade_out_s) w = std::min(w, left / fade_out_s);
  return w;
}

}  // namespace

const char* plant_kind_name(PlantKind k) {
  switch (k) {
    case PlantKind::airing: return "airing";
    case PlantKind::bed_only: return "bed_only";
    case PlantKind::tag_only: return "tag_only";
    case PlantKind::dj_over_bed: return "dj_over_bed";
  }
  return "?";
}

std::optional<AirDay> make_air_day(const AirDayOptions& o, std::string* error) {
  auto fail = [&](const std::string& e) {
    if (error) *error = e;
    return std::nullopt;
  };
  auto say = [&](const std::string& s) {
    if (o.log) o.log(s);
  };
  AirDay day;
  const auto day0 = parse_iso8601_local(o.start);
  if (!day0) return fail("not a local date-time: " + o.start);
  day.day0 = *day0;
  const fs::path dir(o.dir);
  fs::create_directories(dir / "library");
  fs::create_directories(dir / "air");
  Rng rng(o.seed * 7919 + 17);

  // Library.
  for (size_t i = 0; i < std::size(kSpots); ++i) {
    AirMaster m = make_master(kSpots[i], i, o.seed);
    m.path = (dir / "library" / (m.id + ".wav")).string();
    const bool stereo = m.rate_hz == 44100;
    if (!(o.reuse && fs::exists(m.path))) {
      const std::string err =
          write_audio(m.path, stereo ? to_stereo(m.audio, 1.0) : m.audio, stereo ? 2 : 1, m.rate_hz);
      if (!err.empty()) return fail(err);
    }
    day.masters.push_back(std::move(m));
  }

  // Recordings: consecutive files, one gap mid-day.
  const size_t n_files = std::max<size_t>(1, static_cast<size_t>(std::llround(o.hours * 3600 / o.file_s)));
  const double rates[] = {22050, 32000, 44100, 48000};
  const char* codecs[] = {"flac", "mp3-64", "mp3-96", "mp3-128", "flac", "mp3-64", "wav"};
  const size_t gap_before = o.gap && n_files >= 3 ? n_files / 2 : 0;  // file index after the gap
  const double gap_s = gap_before ? rng.uniform(60, 150) : 0;
  for (size_t k = 0; k < n_files; ++k) {
    AirFile f;
    f.start_s = day.day0 + static_cast<double>(k) * o.file_s;
    f.duration_s = o.file_s - (k + 1 == gap_before ? gap_s : 0);
    f.rate_hz = rates[rng.next() % 4];
    f.codec = codecs[rng.next() % std::size(codecs)];
    f.channels = rng.uniform() < 0.5 ? 2 : 1;
    if (k == 0) f.codec = "flac";  // the first two files differ in codec and rate
    if (k == 1) f.codec = "mp3-64", f.rate_hz = 22050;
    f.path = (dir / "air" / file_name(f.start_s, f.codec.rfind("mp3", 0) == 0 ? "mp3" : f.codec)).string();
    day.files.push_back(f);
  }
  const LocalSeconds day_end = day.files.back().start_s + day.files.back().duration_s;
  const LocalSeconds gap_start = gap_before ? day.files[gap_before - 1].start_s + day.files[gap_before - 1].duration_s : 0;
  const LocalSeconds gap_end = gap_before ? day.files[gap_before].start_s : 0;

  // Breaks and programme. Aired masters: all but the never-aired one.
  auto draw_master = [&] { return static_cast<size_t>(rng.next() % kNeverAired); };
  auto on_air = [&](size_t m, const AirChain& c) { return day.masters[m].duration_s * c.coverage / c.time_scale(); };
  auto plant = [&](PlantKind kind, size_t m, LocalSeconds at, AirChain c) {
    Planted p;
    p.kind = kind;
    p.master = m;
    p.aired_s = at;
    if (kind == PlantKind::tag_only) c.coverage = 1, c.speed = 1, c.tempo = 1, c.stretcher = AirChain::Stretcher::none;
    p.chain = c;
    p.on_air_s = kind == PlantKind::tag_only ? day.masters[m].tag_s : on_air(m, c);
    day.planted.push_back(p);
    return at + p.on_air_s;
  };
  std::vector<LocalSeconds> boundaries;
  for (size_t k = 1; k < n_files; ++k)
    if (k != gap_before) boundaries.push_back(day.files[k].start_s);
  size_t next_boundary = 0;

  // An airing cut by the start of the first recording (60-80 % recorded).
  LocalSeconds t = day.day0;
  {
    const size_t m = draw_master();
    AirChain c = draw_chain(rng, o.odds);
    c.coverage = 1;
    c.snr_db = std::max(c.snr_db, 6.0);
    t = plant(PlantKind::airing, m, day.day0 - rng.uniform(0.2, 0.4) * on_air(m, c), c);
  }
  bool gap_done = gap_before == 0;
  while (t < day_end) {
    // Programme of 2-5 minutes, perhaps with a hard negative in it.
    double stretch = rng.uniform(120, 300);
    if (rng.uniform() < o.negative_odds) {
      const double u = rng.uniform();
      const PlantKind kind = u < 0.4 ? PlantKind::bed_only : u < 0.7 ? PlantKind::tag_only : PlantKind::dj_over_bed;
      size_t m = draw_master();
      if (kind == PlantKind::tag_only) m = 8 + rng.next() % 5;  // a family member
      AirChain c = draw_chain(rng, o.odds);
      c.coverage = 1;
      c.snr_db = rng.uniform(10, 25);
      const LocalSeconds at = t + rng.uniform(20, std::max(21.0, stretch - 80));
      // Kept clear of file boundaries and the gap, so that what is asked of the negative is plain.
      const bool clear = std::none_of(boundaries.begin(), boundaries.end(), [&](LocalSeconds b) {
        return b > at - 5 && b < at + 70;
      }) && !(gap_before && at + 70 > gap_start && at < gap_end + 5);
      if (clear && at + 70 < day_end) plant(kind, m, at, c);
    }
    t += stretch;
    // The gap: a break ending with an airing cut by it (55-80 % recorded).
    if (!gap_done && t + 300 > gap_start) {
      const size_t m = draw_master();
      AirChain c = draw_chain(rng, o.odds);
      c.coverage = 1;
      c.snr_db = std::max(c.snr_db, 6.0);
      plant(PlantKind::airing, m, gap_start - rng.uniform(0.55, 0.8) * on_air(m, c), c);
      t = gap_end + rng.uniform(30, 90);
      gap_done = true;
      continue;
    }
    // A break of 2-4 spots, across a file boundary when one is near.
    const int n = 2 + static_cast<int>(rng.next() % 3);
    std::vector<std::pair<size_t, AirChain>> brk;
    double len = 0;
    for (int i = 0; i < n; ++i) {
      size_t m = draw_master();
      while (!brk.empty() && brk.back().first == m) m = draw_master();
      brk.emplace_back(m, draw_chain(rng, o.odds));
      len += on_air(m, brk.back().second) + 0.3;
    }
    while (next_boundary < boundaries.size() && boundaries[next_boundary] < t) ++next_boundary;
    if (next_boundary < boundaries.size() && boundaries[next_boundary] < t + len + 400) {
      // Start the break so that airing j straddles the boundary, 20-80 % before it.
      const int j = static_cast<int>(rng.next() % static_cast<uint64_t>(n));
      double before = 0;
      for (int i = 0; i < j; ++i) before += on_air(brk[i].first, brk[i].second) + 0.15;
      t = std::max(t, boundaries[next_boundary] - before - rng.uniform(0.2, 0.8) * on_air(brk[j].first, brk[j].second));
      ++next_boundary;
    }
    if (gap_before && !gap_done && t + len > gap_start - 30) continue;  // leave the run-up to the gap clear
    if (t + len > day_end - 60) break;
    for (size_t i = 0; i < brk.size(); ++i) {
      const LocalSeconds end = plant(PlantKind::airing, brk[i].first, t, brk[i].second);
      const AirChain& c = brk[i].second;
      const double overlap = i + 1 < brk.size() ? std::min(c.fade_out_s, brk[i + 1].second.fade_in_s) : 0;
      t = end - overlap + rng.uniform(0, 0.3);
    }
  }
  // An airing cut by the end of the last recording (55-80 % recorded).
  {
    const size_t m = draw_master();
    AirChain c = draw_chain(rng, o.odds);
    c.coverage = 1;
    c.snr_db = std::max(c.snr_db, 6.0);
    plant(PlantKind::airing, m, day_end - rng.uniform(0.55, 0.8) * on_air(m, c), c);
  }
  std::sort(day.planted.begin(), day.planted.end(),
            [](const Planted& a, const Planted& b) { return a.aired_s < b.aired_s; });

  // What of each was recorded, and where.
  for (auto& p : day.planted) {
    const LocalSeconds a = p.aired_s, b = p.aired_s + p.on_air_s;
    const double full_on_air = p.kind == PlantKind::tag_only ? p.on_air_s : day.masters[p.master].duration_s / p.chain.time_scale();
    p.coverage = p.on_air_s / full_on_air;
    if (p.chain.coverage < 1) p.cut = "truncated";
    LocalSeconds rec_a = a, rec_b = b;
    if (a < day.day0) rec_a = day.day0, p.cut = "recording_start";
    if (b > day_end) rec_b = day_end, p.cut = "recording_end";
    if (gap_before && a < gap_start && b > gap_start) rec_b = gap_start, p.cut = "gap";
    p.coverage = (rec_b - rec_a) / full_on_air;
    for (size_t k = 0; k < day.files.size(); ++k) {
      const auto& f = day.files[k];
      if (rec_a >= f.start_s && rec_a < f.start_s + f.duration_s && p.first_file < 0) p.first_file = static_cast<int>(k);
      if (k > 0 && static_cast<int>(k) != static_cast<int>(gap_before) && f.start_s > rec_a && f.start_s < rec_b) p.straddle = true;
    }
    p.conditions = p.chain.conditions();
    if (p.straddle) p.conditions.push_back("straddle");
    if (!p.cut.empty() && p.cut != "truncated") p.conditions.push_back("cut by " + p.cut);
    if (p.first_file >= 0) p.conditions.push_back("in " + day.files[static_cast<size_t>(p.first_file)].codec);
  }

  // The chain's delay for each airing, at the rate of its first file.
  for (auto& p : day.planted) {
    // A tempo change has no one delay (the stretcher moves its frames):
    // its airings are timed against the master's first sample.
    if (p.kind != PlantKind::airing || p.first_file < 0 || p.chain.tempo != 1) continue;
    const AirMaster& m = day.masters[p.master];
    const double R = day.files[static_cast<size_t>(p.first_file)].rate_hz;
    const Samples head(m.audio.begin(), m.audio.begin() + static_cast<long>(std::min(m.audio.size(), static_cast<size_t>(4 * m.rate_hz))));
    AirChain c = p.chain;
    c.coverage = 1;
    const Samples out = render_chain(head, m.rate_hz, c, R);
    const Samples ref = resample_all(head, m.rate_hz * p.chain.speed, R);
    const auto from = static_cast<long>(1.0 * R), to = static_cast<long>(std::min<double>(3.0 * R, static_cast<double>(ref.size()) - 0.01 * R));
    const long max_lag = static_cast<long>(0.004 * R);
    auto corr = [&](long lag) {
      double xy = 0, xx = 0, yy = 0;
      for (long i = from; i < to; ++i) {
        const long j = i + lag;
        if (j < 0 || j >= static_cast<long>(out.size())) continue;
        xy += static_cast<double>(ref[static_cast<size_t>(i)]) * out[static_cast<size_t>(j)];
        xx += static_cast<double>(ref[static_cast<size_t>(i)]) * ref[static_cast<size_t>(i)];
        yy += static_cast<double>(out[static_cast<size_t>(j)]) * out[static_cast<size_t>(j)];
      }
      return xx > 0 && yy > 0 ? std::fabs(xy) / std::sqrt(xx * yy) : 0.0;
    };
    long best = 0;
    double best_c = -1;
    std::vector<double> cs(static_cast<size_t>(2 * max_lag + 1));
    for (long lag = -max_lag; lag <= max_lag; ++lag) {
      cs[static_cast<size_t>(lag + max_lag)] = corr(lag);
      if (cs[static_cast<size_t>(lag + max_lag)] > best_c) best_c = cs[static_cast<size_t>(lag + max_lag)], best = lag;
    }
    double frac = 0;
    if (best > -max_lag && best < max_lag) {
      const double a = cs[static_cast<size_t>(best - 1 + max_lag)], b = best_c, d = cs[static_cast<size_t>(best + 1 + max_lag)];
      const double den = a - 2 * b + d;
      if (den < 0) frac = 0.5 * (a - d) / den;
    }
    p.chain_delay_s = (static_cast<double>(best) + frac) / R;
  }

  // Render each file at its rate.
  std::map<std::pair<size_t, double>, Samples> clips;  // (planted, rate) -> clip
  for (size_t k = 0; k < day.files.size(); ++k) {
    const AirFile& f = day.files[k];
    const double R = f.rate_hz;
    if (o.reuse && fs::exists(f.path)) continue;
    Samples prog = programme(f.duration_s, kProgrammeRate, o.seed * 1000 + k);
    Samples air = resample_all(prog, kProgrammeRate, R);
    air.resize(static_cast<size_t>(std::llround(f.duration_s * R)), 0.0f);
    const Samples floor = coloured_noise(air.size(), 0.1 * std::pow(10.0, -45 / 20.0), NoiseColour::pink, o.seed * 77 + k);
    for (size_t i = 0; i < air.size(); ++i) air[i] += floor[i];
    for (size_t pi = 0; pi < day.planted.size(); ++pi) {
      const Planted& p = day.planted[pi];
      if (p.aired_s + p.on_air_s + 1 < f.start_s || p.aired_s - 1 > f.start_s + f.duration_s) continue;
      auto key = std::make_pair(pi, R);
      if (!clips.count(key)) {
        const AirMaster& m = day.masters[p.master];
        Samples src;
        if (p.kind == PlantKind::airing) src = m.audio;
        else if (p.kind == PlantKind::bed_only) src = m.bed;
        else if (p.kind == PlantKind::tag_only) src = m.tag;
        else {
          src = m.bed;
          mix_into(src, voice(m.duration_s - 1, m.rate_hz, o.seed * 5003 + pi), static_cast<size_t>(0.5 * m.rate_hz), 1.0);
        }
        AirChain c = p.chain;
        if (p.kind == PlantKind::airing || p.kind == PlantKind::tag_only) c.coverage = p.chain.coverage;
        clips[key] = render_chain(src, m.rate_hz, c, R);
      }
      const Samples& clip = clips[key];
      const double noise_rms = rms(clip) * std::pow(10.0, -p.chain.snr_db / 20);
      const size_t ramp = static_cast<size_t>(0.5 * R);
      const Samples noise = coloured_noise(clip.size() + 2 * ramp, noise_rms, p.chain.noise, p.chain.noise_seed);
      const long long at = std::llround((p.aired_s - f.start_s) * R);
      for (size_t i = 0; i < clip.size(); ++i) {
        const long long j = at + static_cast<long long>(i);
        if (j < 0 || j >= static_cast<long long>(air.size())) continue;
        const double w = crossfade_weight(i, clip.size(), R, p.chain.fade_in_s, p.chain.fade_out_s);
        const size_t jj = static_cast<size_t>(j);
        air[jj] = static_cast<float>(air[jj] * (1 - w) + clip[i] * w);
      }
      for (size_t i = 0; i < noise.size(); ++i) {
        const long long j = at - static_cast<long long>(ramp) + static_cast<long long>(i);
        if (j < 0 || j >= static_cast<long long>(air.size())) continue;
        const double w = std::min({1.0, static_cast<double>(i) / static_cast<double>(ramp),
                                   static_cast<double>(noise.size() - i) / static_cast<double>(ramp)});
        air[static_cast<size_t>(j)] += static_cast<float>(noise[i] * w);
      }
    }
    soft_limit(air, 0.6, 0.95);
    double kbps = 128;
    if (f.codec == "mp3-64") kbps = 64;
    if (f.codec == "mp3-96") kbps = 96;
    const std::string err = write_audio(f.path, f.channels == 2 ? to_stereo(air, 0.92) : air, f.channels, R, kbps);
    if (!err.empty()) return fail(err);
    for (auto it = clips.begin(); it != clips.end();)  // clips wholly before the next file are done
      it = day.planted[it->first.first].aired_s + day.planted[it->first.first].on_air_s < f.start_s + f.duration_s - 1
               ? clips.erase(it)
               : std::next(it);
    char line[256];
    std::snprintf(line, sizeof line, "wrote %s (%s, %.0f Hz, %d ch, %.0f s)", fs::path(f.path).filename().c_str(),
                  f.codec.c_str(), R, f.channels, f.duration_s);
    say(line);
  }

  // The planned log.
  std::string log = "slot,spot,planned,window_s\n";
  size_t slot_no = 0;
  for (auto& p : day.planted) {
    if (p.kind != PlantKind::airing || rng.uniform() < 0.15) continue;
    const AirMaster& m = day.masters[p.master];
    p.planned_spot = m.id;
    if (!m.family.empty() && rng.uniform() < 0.3) {  // the log names another version
      std::vector<std::string> sibs;
      for (const auto& x : day.masters)
        if (x.family == m.family && x.id != m.id) sibs.push_back(x.id);
      p.planned_spot = sibs[rng.next() % sibs.size()];
    }
    p.slot = "P" + std::to_string(++slot_no);
    const double off = rng.uniform() < 0.15 ? rng.uniform(90, 300) * (rng.uniform() < 0.5 ? -1 : 1) : rng.uniform(-40, 40);
    p.planned_s = std::round(p.aired_s + off);
    log += p.slot + "," + p.planned_spot + "," + format_iso8601_local(p.planned_s, 0) + ",60\n";
  }
  for (int h = 0; h < static_cast<int>(std::ceil(o.hours)) * 2; ++h) {
    const std::string slot = "N" + std::to_string(h + 1);
    day.never_aired_slots.push_back(slot);
    log += slot + "," + day.masters[kNeverAired].id + "," + format_iso8601_local(day.day0 + h * 1800.0 + 600, 0) + ",60\n";
  }
  day.planned_log = log;
  std::ofstream(dir / "planned.csv") << log;
  return day;
}

}  // namespace godwit::synth
