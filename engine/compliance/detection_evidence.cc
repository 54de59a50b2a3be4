// Steps 4 and 6 of a reconcile job, for the detections of one run: what a
// distributed job's tasks gather next to their search (reconcile_job.h).
#include <cmath>
#include <map>
#include <tuple>

#include "godwit/audio/analysis_stream.h"
#include "godwit/compliance/reconcile_job.h"
#include "godwit/audio/resampler.h"
#include "foreground_contrast.h"
#include "search/pearson.h"
#include "speed/tempo_refiner.h"

namespace godwit {

std::vector<std::optional<DetectionEvidence>> gather_evidence(const std::vector<TemplateReport>& templates,
                                                              const std::vector<ConcatPart>& run,
                                                              const std::vector<Match>& matches,
                                                              const ReconcileOptions& o) {
  std::vector<std::optional<DetectionEvidence>> out(matches.size());
  if (matches.empty() || run.empty()) return out;
  const SourceOpener& base = o.locate.opener;
  const std::shared_ptr<MasterLibrary> library =
      o.locate.masters ? o.locate.masters : std::make_shared<MasterLibrary>(base, o.locate.analysis_rate_hz, 0);
  auto opened = ConcatSource::open("run", run, base, o.locate.channel);
  if (!opened) return out;
  // Each detection is read at the rate of the file where it starts, so
  // that it is verified and measured at that file's native rate; the next
  // file of a run, if logged at another rate, is resampled to it.
  std::map<double, std::unique_ptr<ConcatSource>> at_rate;
  const double stream_rate = opened.value()->info().native_rate_hz;
  at_rate[stream_rate] = std::move(opened.value());
  detail::FftPlans plans(Planner::estimate);
  std::map<std::string, const TemplateReport*> by_id;
  for (const auto& t : templates) by_id[t.id] = &t;
  // A master as it aired: at the recording's rate, and at the speed it
  // aired at (decoded at rate / speed, it plays at `rate` as it aired).
  std::map<std::tuple<std::string, double, double>, Samples> native_master;
  for (size_t i = 0; i < matches.size(); ++i) {
    const Match& m = matches[i];
    auto t = by_id.find(m.template_id);
    if (t == by_id.end()) continue;
    const double rate = at_rate[stream_rate]->part_rate_at(m.offset_s * stream_rate);
    if (!at_rate.count(rate)) {
      auto c = ConcatSource::open("run", run, base, o.locate.channel, rate);
      if (!c) continue;
      at_rate[rate] = std::move(c.value());
    }
    ConcatSource& concat = *at_rate[rate];
    const auto key = std::make_tuple(m.template_id, m.speed, rate);
    if (!native_master.count(key)) {
      auto s = library->samples(t->second->path, rate / m.speed);
      if (!s) continue;
      native_master[key] = *s.value();
    }
    // An airing at another tempo, pitch kept: the master as it aired is
    // the master aligned to it frame by frame (tempo_refiner.h), and
    // everything below compares that with the airing in air time.
    const double k = m.speed * m.tempo;  // air time = master time / k
    const Samples& stored = native_master[key];
    const size_t air_len = static_cast<size_t>(static_cast<double>(stored.size()) / m.tempo);
    const Samples span = read_native_span(concat, std::llround(m.offset_s * rate), air_len);
    const Samples master = m.tempo == 1 ? Samples{}
                                        : detail::aligned_master(plans, stored, span, rate, m.tempo, detail::kTempoJitterS,
                                                                                 m.polarity);
    const Samples& as_aired = m.tempo == 1 ? stored : master;
    DetectionEvidence e;
    // Segments of segment_s of the master last segment_s / k on air; the
    // profile is then put back in master time.
    VerifyOptions vo = o.verify;
    vo.segment_s = o.verify.segment_s / k;
    e.profile = verify_airing(as_aired, span, rate, m.polarity, vo);
    e.profile.segment_s = o.verify.segment_s;
    const double length_s = t->second->duration_s;
    auto to_master_time = [&](double& at_s) {
      at_s = std::min(at_s * k, length_s);
      if (at_s > length_s - 1e-3) at_s = length_s;  // a sample's rounding at the end
    };
    for (auto& [from, to] : e.profile.missing_s) to_master_time(from), to_master_time(to);
    for (double* edge : {&e.profile.aired_from_s, &e.profile.aired_to_s, &e.profile.aired_from_range_s.first,
                      &e.profile.aired_from_range_s.second, &e.profile.aired_to_range_s.first,
                      &e.profile.aired_to_range_s.second})
      to_master_time(*edge);
    // Match quality of the part that aired: a cut-off airing of coverage c
    // scores about q * sqrt(c) overall, q being how well its aired part
    // matches.
    {  // over the aired part, in air time
      const size_t from = static_cast<size_t>(e.profile.aired_from_s / k * rate);
      const size_t to = static_cast<size_t>(e.profile.aired_to_s / k * rate);
      if (auto fc = detail::foreground_contrast(plans, as_aired, span, rate, e.profile.aired, vo.segment_s, from, to,
                                                o.foreground_edge_s)) {
        e.foreground_contrast = fc->contrast;
        e.shape_match = fc->shape_match;
      }
    }
    {  // the aired part's own match, at the native rate, in air time
      const size_t from = std::min(as_aired.size(), static_cast<size_t>(e.profile.aired_from_s / k * rate));
      const size_t to = std::min({as_aired.size(), span.size(), static_cast<size_t>(e.profile.aired_to_s / k * rate)});
      if (to > from + 16)
        e.aired_score = m.polarity * detail::pearson(as_aired.data() + from, span.data() + from, to - from, 1e-12);
      // At another tempo the aligned master's frames were free to move, which
      // raises what anything scores against it: the score is taken against
      // the null level of the time-reversed master aligned the same way on
      // this span, as the tempo fit's is (tempo_refiner.h). A music bed aired
      // alone reads 0.38-0.43 so and 0.48-0.50 raw, tempo-changed airings
      // 0.45-0.96 so and raw alike (study day: accuracy_bench --seed 71
      // --negative-odds 1 --tempo-odds 0.6; their nulls 0.12-0.17 and 0-0.12).
      if (m.tempo != 1 && to > from + 16) {
        const Samples reversed(stored.rbegin(), stored.rend());
        const Samples null = detail::aligned_master(plans, reversed, span, rate, m.tempo, detail::kTempoJitterS,
                                                    m.polarity);
        const double r0 = std::max(
            0.0, m.polarity * detail::pearson(null.data() + from, span.data() + from, std::min(to, null.size()) - from, 1e-12));
        e.aired_score = (e.aired_score - r0) / (1 - r0);
      }
    }
    e.weak = e.profile.coverage < o.min_coverage || e.aired_score < o.min_airing_score ||
             (e.foreground_contrast && (*e.foreground_contrast < -o.max_foreground_deficit ||
                                        *e.foreground_contrast + *e.shape_match < o.min_foreground_evidence));
    if (!e.weak && o.loudness.enabled) {
      // The aired part: up to the first missing range that reaches the end.
      double aired_s = length_s;
      if (!e.profile.missing_s.empty() && e.profile.missing_s.back().second >= length_s - 1e-6)
        aired_s = e.profile.missing_s.back().first;
      aired_s /= k;  // master time to air time
      if (aired_s > 0.4) {
        auto l = measure_span_lufs(concat, std::llround(m.offset_s * rate), std::llround(aired_s * rate));
        if (l) e.spot_lufs = l.value();
      }
      const double from_s = std::max(0.0, m.offset_s - o.loudness.programme_s);
      if (m.offset_s - from_s > 0.4) {
        auto l = measure_span_lufs(concat, std::llround(from_s * rate), std::llround((m.offset_s - from_s) * rate));
        if (l) e.programme_lufs = l.value();
      }
    }
    out[i] = std::move(e);
  }
  return out;
}

}  // namespace godwit
