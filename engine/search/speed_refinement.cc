#include "speed_refinement.h"

#include <algorithm>
#include <cmath>
#include <map>
#include <optional>
#include <set>

#include "core/thread_pool.h"
#include "godwit/audio/analysis_stream.h"
#include "godwit/audio/resampler.h"
#include "speed/speed_refiner.h"
#include "speed/tempo_refiner.h"

namespace godwit::detail {
namespace {

constexpr double kTempoOverSpeed = 0.2;

}  // namespace

std::vector<std::pair<size_t, Match>> refine_speed_candidates(const std::string& path, const TemplateBank& bank,
                                                              const LocateOptions& o,
                                                              const std::vector<SpeedCandidate>& cands, int64_t pad) {
  std::vector<std::pair<size_t, Match>> out;
  if (cands.empty()) return out;
  auto rec = o.opener(path, o.channel);
  if (!rec) {
    if (o.on_diagnostic) o.on_diagnostic(path + ": cannot reopen for the speed search: " + rec.error().message);
    return out;
  }
  AudioSource& src = *rec.value();
  const double native = src.info().native_rate_hz;
  const double fs = o.analysis_rate_hz;
  // Candidates of one master together, so that a batch needs few masters;
  // a batch's masters are decoded for it and dropped after (a day's job
  // may have a hundred masters of 30 s: no need to hold them all).
  std::vector<size_t> order(cands.size());
  for (size_t i = 0; i < order.size(); ++i) order[i] = i;
  std::stable_sort(order.begin(), order.end(),
                   [&](size_t a, size_t b) { return cands[a].template_index < cands[b].template_index; });
  std::map<size_t, Samples> masters;  // analysis rate
  // Spans in batches, so memory stays a few spans per thread.
  ThreadPool pool(o.correlator.threads);
  FftPlans plans(Planner::estimate);
  const double margin_s = 0.5;
  const double low = 1.0 / (1.0 + o.speed.max_deviation) - 1e-3, high = 1.0 + o.speed.max_deviation + 1e-3;
  const double tempo_low = 1.0 / (1.0 + o.speed.max_tempo_deviation) - 1e-3,
               tempo_high = 1.0 + o.speed.max_tempo_deviation + 1e-3;
  std::vector<std::optional<Match>> fitted(cands.size());
  const size_t batch = 4 * pool.workers();
  std::vector<size_t> master_len(bank.size(), 0);
  for (size_t first = 0; first < cands.size(); first += batch) {
    if (o.should_stop && o.should_stop()) break;
    const size_t n = std::min(batch, cands.size() - first);
    std::set<size_t> needed;
    for (size_t i = 0; i < n; ++i) needed.insert(cands[order[first + i]].template_index);
    for (auto it = masters.begin(); it != masters.end();) it = needed.count(it->first) ? std::next(it) : masters.erase(it);
    for (size_t t : needed) {
      if (masters.count(t)) continue;
      Samples m;
      if (auto d = o.masters->samples(bank.at(t).path, fs)) m = *d.value();
      master_len[t] = m.size();
      masters.emplace(t, std::move(m));
    }
    std::vector<Samples> spans(n);
    std::vector<double> span_start(n);
    for (size_t i = 0; i < n; ++i) {
      const auto& c = cands[order[first + i]];
      const Samples& master = masters.at(c.template_index);
      if (master.empty()) continue;
      const double from_s = (c.offset - static_cast<double>(pad)) / fs - margin_s;
      // A tempo change's coarse speed leans towards 1 (tempo_refiner.h):
      // room for the 2 % it may lean.
      const double lean = o.speed.max_tempo_deviation > 0 ? 0.02 : 0.0;
      const double len_s = static_cast<double>(master.size()) / fs / c.speed * (1 + c.speed_step + lean) + 2 * margin_s;
      const auto start = static_cast<int64_t>(std::floor(from_s * native));
      const auto len = static_cast<size_t>(std::ceil(len_s * native));
      Samples span_native = read_native_span(src, start, len);
      if (span_native.empty()) continue;
      // Past the recording's end: silence, as in the plain search, so that
      // an airing cut by the end is scored on the part that was recorded.
      span_native.resize(len, 0.0f);
      spans[i] = resample_all(span_native, native, fs);
      span_start[i] = static_cast<double>(start) / native * fs;  // analysis samples
    }
    pool.run(n, [&](size_t i, size_t) {
      const auto& c = cands[order[first + i]];
      if (spans[i].empty()) return;
      const SpeedSeed seed{c.speed, c.offset - static_cast<double>(pad) - span_start[i], c.speed_step};
      const Samples& master = masters.at(c.template_index);
      Match m;
      m.template_id = bank.at(c.template_index).id;
      m.recording = path;
      auto fit = refine_speed(plans, master, spans[i], fs, seed, EnvelopeBands{});
      if (fit && std::fabs(fit->score) < o.picker.threshold) fit.reset();
      // A tempo change, or a speed change whose waveform the tempo model
      // explains clearly better (a phase vocoder's output can pass a speed
      // fit at a low score, 0.18-0.46 where its tempo fit scored 0.8-0.9;
      // a cut speed change can score a little lower than its tempo fit,
      // whose frames may move): a passing speed fit stands unless the
      // tempo fit beats it by kTempoOverSpeed.
      std::optional<TempoFit> tf;
      // (A speed fit within kTempoOverSpeed of a perfect score stands
      // whatever the tempo fit would say: no need to try it.)
      if (o.speed.max_tempo_deviation > 0 && !(fit && std::fabs(fit->score) + kTempoOverSpeed > 1)) {
        tf = refine_tempo(plans, master, spans[i], fs, seed, EnvelopeBands{}, o.speed.max_tempo_deviation);
        if (tf && (std::fabs(tf->score) < o.picker.threshold || tf->tempo < tempo_low || tf->tempo > tempo_high ||
                   (fit && std::fabs(fit->score) + kTempoOverSpeed > std::fabs(tf->score))))
          tf.reset();
      }
      if (tf) {
        if (std::fabs(tf->tempo - 1) < o.speed.unit_tolerance) return;
        m.offset_s = (span_start[i] + tf->offset) / fs;
        m.score = tf->score;
        m.polarity = tf->polarity;
        m.tempo = tf->tempo;
      } else {
        if (!fit || std::fabs(fit->speed - 1) < o.speed.unit_tolerance || fit->speed < low || fit->speed > high) return;
        m.offset_s = (span_start[i] + fit->offset) / fs;
        m.score = fit->score;
        m.polarity = fit->polarity;
        m.speed = fit->speed;
      }
      fitted[order[first + i]] = std::move(m);
    });
  }
  for (size_t i = 0; i < cands.size(); ++i) {
    if (!fitted[i]) continue;
    Match& m = *fitted[i];
    const size_t t = cands[i].template_index;
    // Two coarse peaks may settle on one airing: keep the better.
    const double half_s = 0.25 * static_cast<double>(master_len[t]) / fs;
    auto same = std::find_if(out.begin(), out.end(), [&](const auto& f) {
      return f.first == t && std::fabs(f.second.offset_s - m.offset_s) < half_s;
    });
    if (same == out.end()) out.emplace_back(t, std::move(m));
    else if (std::fabs(m.score) > std::fabs(same->second.score)) same->second = std::move(m);
  }
  return out;
}

void merge_fits(std::vector<std::pair<size_t, Match>>& found, std::vector<std::pair<size_t, Match>> fits,
                const TemplateBank& bank, double rate_hz) {
  for (auto& f : fits) {
    const double half_s = 0.5 * static_cast<double>(bank.at(f.first).len_samples) / rate_hz;
    auto overlaps = [&](const std::pair<size_t, Match>& p) {
      return p.first == f.first && p.second.speed == 1 && p.second.tempo == 1 &&
             std::fabs(p.second.offset_s - f.second.offset_s) < half_s;
    };
    bool better = std::fabs(f.second.tempo - 1) >= 0.002 || f.second.speed != 1;
    for (const auto& p : found)
      if (overlaps(p) && std::fabs(p.second.score) >= std::fabs(f.second.score)) better = false;
    const bool any = std::any_of(found.begin(), found.end(), overlaps);
    if (any && !better) continue;
    found.erase(std::remove_if(found.begin(), found.end(), overlaps), found.end());
    found.push_back(std::move(f));
  }
}

}  // namespace godwit::detail
