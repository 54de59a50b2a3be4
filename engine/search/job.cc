#include "godwit/search/job.h"

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <future>
#include <map>
#include <set>

#include "godwit/audio/analysis_stream.h"
#include "godwit/search/native_refiner.h"
#include "godwit/audio/resampler.h"
#include "speed/speed_pass.h"
#include "core/thread_pool.h"
#include "core/wall_timer.h"
#include "screen_pass.h"
#include "speed_refinement.h"

namespace godwit {
namespace {


struct Banks {
  std::shared_ptr<const TemplateBank> exact;
  std::shared_ptr<const TemplateBank> screen;  // at the screen rate; null: no screening
};

// The masters at the screen rate, in the exact bank's order.
Result<std::shared_ptr<const TemplateBank>> load_screen_bank(const TemplateBank& exact, const LocateOptions& o) {
  std::vector<TemplateInput> inputs;
  for (const auto& t : exact.templates()) {
    auto samples = o.masters->samples(t.path, o.screen.rate_hz);
    if (!samples) return samples.error();
    TemplateInput in;
    in.id = t.id;
    in.path = t.path;
    in.native_rate_hz = t.native_rate_hz;
    in.samples = *samples.value();
    inputs.push_back(std::move(in));
  }
  BankOptions b = o.bank;
  b.fixed_fft_size = 0;
  return TemplateBank::build(std::move(inputs), b);
}

Result<Banks> load_bank(const LocateJob& job, const LocateOptions& o, std::vector<TemplateReport>& reports,
                        std::vector<detail::WarpTemplate>* warp) {
  detail::FftPlans env_plans(Planner::estimate);
  if (job.templates.empty()) return Error{ErrorCode::usage, "no templates given", "", std::nullopt};
  std::vector<TemplateInput> inputs;
  std::map<std::string, std::string> seen;
  for (const auto& path : job.templates) {
    const std::string id = template_id_for(path);
    if (auto it = seen.find(id); it != seen.end())
      return Error{ErrorCode::usage, "two masters share the id '" + id + "': " + it->second + " and " + path,
                   path, std::nullopt};
    seen[id] = path;
    auto samples = o.masters->samples(path, o.analysis_rate_hz);
    if (!samples) return samples.error();
    const double dur_s = static_cast<double>(samples.value()->size()) / o.analysis_rate_hz;
    if (dur_s < kMinTemplateSeconds)
      return Error{ErrorCode::invalid_template,
                   "master is " + std::to_string(dur_s) + " s long; the shortest accepted is 0.5 s", path,
                   std::nullopt};
    TemplateInput in;
    in.id = id;
    in.path = path;
    in.native_rate_hz = o.masters->native_rate_hz(path).value();  // known: decoded above
    in.samples = *samples.value();
    if (warp) {
      detail::WarpTemplate w;
      const detail::WarpLayout l = detail::warp_layout(o.analysis_rate_hz);
      w.envelope = detail::envelope_of(env_plans, in.samples, o.analysis_rate_hz, l.window, l.hop, l.hop,
                                       detail::EnvelopeBands{}, w.frames);
      warp->push_back(std::move(w));
    }
    inputs.push_back(std::move(in));
  }
  Banks banks;
  BankOptions bopt = o.bank;
  bool screening = o.screen.enabled;
  if (screening) {
    // The exact search scores short spans around the screen's candidates:
    // each master at the FFT size that holds such a span (screen_pass.h).
    // The masters' spectra are made when a span is scored (few pairs),
    // so the bank keeps only their samples.
    bopt.span_samples = detail::exact_span_samples(o.picker);
    bopt.fixed_fft_size = 0;
    bopt.spectra_on_demand = true;
    size_t bytes = 0;
    for (const auto& in : inputs) bytes += in.samples.size() * sizeof(float);
    if (bytes > bopt.spectra_budget_bytes) {
      // A library too large even for that: the full search's sizes,
      // chosen under the budget, fit where the samples do not.
      if (o.on_diagnostic)
        o.on_diagnostic("screening off: its masters would need " + std::to_string(bytes >> 20) +
                        " MiB, over the budget of " + std::to_string(bopt.spectra_budget_bytes >> 20) + " MiB");
      bopt = o.bank;
      screening = false;
    }
  }
  auto bank = TemplateBank::build(std::move(inputs), bopt);
  if (!bank) return bank.error();
  banks.exact = bank.value();
  if (screening) {
    auto screen = load_screen_bank(*banks.exact, o);
    if (!screen) return screen.error();
    banks.screen = screen.value();
  }
  for (const auto& t : banks.exact->templates())
    reports.push_back({t.id, t.path, static_cast<double>(t.len_samples) / o.analysis_rate_hz, t.fft_size});
  return banks;
}

// Native-rate refinement of the candidates of one recording, in place.
void refine_matches(const std::string& path, const TemplateBank& bank, const LocateOptions& o,
                    std::vector<std::pair<size_t, Match>>& found) {
  if (found.empty()) return;
  auto rec = o.opener(path, o.channel);
  if (!rec) {
    if (o.on_diagnostic) o.on_diagnostic(path + ": cannot reopen for refinement: " + rec.error().message);
    return;
  }
  AudioSource& src = *rec.value();
  const double native = src.info().native_rate_hz;
  const double ratio = native / o.analysis_rate_hz;
  const int64_t radius = static_cast<int64_t>(std::ceil(1.5 * ratio)) + 2;
  // A master once per speed it aired at: decoded at native / speed, it
  // plays at the native rate as it aired.
  std::set<std::pair<size_t, double>> versions;
  // A tempo change (pitch kept) matches the master only frame by frame:
  // its offset stays the tempo fit's.
  for (const auto& f : found)
    if (f.second.tempo == 1) versions.insert({f.first, f.second.speed});
  for (const auto& [t, speed] : versions) {
    const auto& info = bank.at(t);
    auto master = o.masters->samples(info.path, native / speed);
    if (!master) continue;
    const Samples& tmpl = *master.value();
    for (auto& [ti, m] : found) {
      if (ti != t || m.speed != speed || m.tempo != 1) continue;
      const double coarse = m.offset_s * native;
      // An airing cut by the start or the end of the recording: silence
      // stands for what was not recorded.
      const int64_t start = static_cast<int64_t>(std::floor(coarse)) - radius;
      const size_t want = tmpl.size() + static_cast<size_t>(2 * radius + 1);
      Samples span = read_native_span(src, start, want);
      span.resize(want, 0.0f);
      auto refined = refine_offset(tmpl, span, m.polarity);
      if (!refined) continue;
      const double off_s = (static_cast<double>(start) + refined->offset_frames) / native;
      // Accept only a refinement consistent with the coarse estimate.
      if (std::fabs(off_s - m.offset_s) * o.analysis_rate_hz <= 1.5) {
        m.offset_s = off_s;
        m.refined = true;
      }
    }
  }
}

}  // namespace

std::string template_id_for(const std::string& path) {
  return std::filesystem::path(path).stem().string();
}

Result<LocateResult> run_locate(const LocateJob& job, const LocateOptions& o) {
  if (!(o.analysis_rate_hz >= 1000 && o.analysis_rate_hz <= 192000))
    return Error{ErrorCode::usage, "analysis rate must lie in 1000..192000 Hz", "", std::nullopt};
  if (job.recordings.empty()) return Error{ErrorCode::usage, "no recordings given", "", std::nullopt};
  LocateResult result;
  result.analysis_rate_hz = o.analysis_rate_hz;
  CorrelatorOptions copt = o.correlator;
  BankOptions bopt = o.bank;
  bopt.planner = copt.planner;
  LocateOptions lo = o;
  lo.bank = bopt;
  if (!lo.masters) lo.masters = std::make_shared<MasterLibrary>(o.opener, o.analysis_rate_hz, 0);
  const bool speed_search = o.speed.enabled && o.speed.max_deviation > 0;
  std::vector<detail::WarpTemplate> envelopes;
  if (o.screen.enabled && !(o.screen.rate_hz >= 250))
    return Error{ErrorCode::usage, "the screen rate must be 250 Hz or more", "", std::nullopt};
  // A screen at half the analysis rate or more would save little: the full search.
  lo.screen.enabled = o.screen.enabled && o.screen.rate_hz <= o.analysis_rate_hz / 2;
  std::optional<detail::WallTimer> masters_timer(std::in_place, result.times.masters_s);
  auto bank_r = load_bank(job, lo, result.templates, speed_search ? &envelopes : nullptr);
  if (!bank_r) return bank_r.error();
  std::shared_ptr<const TemplateBank> bank = bank_r.value().exact;
  // The full search, or the screened one (screen_pass.h).
  std::unique_ptr<Correlator> correlator;
  std::unique_ptr<detail::ScreenPass> screen;
  if (bank_r.value().screen)
    screen = std::make_unique<detail::ScreenPass>(bank, bank_r.value().screen, o.analysis_rate_hz, o.screen,
                                                  o.picker, copt);
  else
    correlator = std::make_unique<Correlator>(bank, copt);
  std::unique_ptr<detail::SpeedPass> speed_pass;
  if (speed_search) speed_pass = std::make_unique<detail::SpeedPass>(std::move(envelopes), o.analysis_rate_hz, o.speed, copt.threads);
  masters_timer.reset();
  const size_t nrec = job.recordings.size();
  auto& times = result.times;

  for (size_t ri = 0; ri < nrec; ++ri) {
    const std::string& path = job.recordings[ri];
    RecordingReport report;
    report.path = path;
    auto src_r = o.opener(path, o.channel);
    if (!src_r) {
      report.error = src_r.error();
      if (o.on_diagnostic) o.on_diagnostic(src_r.error().describe());
      result.recordings.push_back(std::move(report));
      continue;
    }
    AudioSource& src = *src_r.value();
    report.format = src.info().format;
    report.native_rate_hz = src.info().native_rate_hz;
    report.channels = src.info().channels;
    if (correlator) correlator->reset();
    if (screen) screen->reset();
    if (speed_pass) speed_pass->reset();
    std::vector<PeakPicker> pickers;
    for (const auto& t : bank->templates()) pickers.emplace_back(t.len_samples, o.picker);
    ScoreSink sink = [&](size_t t, int64_t first, const float* s, size_t n) { pickers[t].feed(first, s, n); };
    int64_t pushed = 0;
    auto push = [&](const float* x, size_t n) {
      {
        detail::WallTimer timed(times.search_s);
        if (correlator) correlator->push(x, n, sink);
        if (screen) screen->push(x, n);
      }
      if (speed_pass) {
        detail::WallTimer timed(times.speed_scan_s);
        speed_pass->push(x, n);
      }
      pushed += static_cast<int64_t>(n);
    };

    AnalysisStream stream(src, o.analysis_rate_hz);
    // The next block is decoded and resampled on a reader thread while the
    // search takes this one (the search's own threads leave a core idle
    // between blocks, and the screened search most of the time).
    using Fetched = std::pair<Result<bool>, Samples>;
    auto fetch = [&stream](Samples buf) -> Fetched {
      auto more = stream.next(buf);
      return {std::move(more), std::move(buf)};
    };
    std::future<Fetched> ahead = std::async(std::launch::async, fetch, Samples{});
    Samples block, spare;
    // Silence of the longest master's length before and after the
    // recording, so that an airing cut by its start or end is scored on
    // the part that was recorded, however small (whether it then clears
    // the threshold does not depend on which other masters share the
    // search); offsets are counted from the recording's first sample
    // (negative for an airing that began before it).
    size_t longest = 0;
    for (const auto& t : bank->templates()) longest = std::max(longest, t.len_samples);
    const Samples edge(longest, 0.0f);
    const auto pad = static_cast<int64_t>(edge.size());
    push(edge.data(), edge.size());
    Progress prog;
    prog.recording_index = ri;
    prog.recordings = nrec;
    prog.recording_total_s = src.info().duration_s();
    int64_t last_report = 0;
    for (;;) {
      if (o.should_stop && o.should_stop()) {
        ahead.wait();  // it reads `stream`
        return Error{ErrorCode::cancelled, "cancelled", path,
                     static_cast<double>(std::max<int64_t>(0, pushed - pad)) / o.analysis_rate_hz};
      }
      auto [more, got] = ahead.get();
      spare = std::move(block);
      block = std::move(got);
      if (more && more.value()) ahead = std::async(std::launch::async, fetch, std::move(spare));
      if (!block.empty()) push(block.data(), block.size());
      if (!more) {
        report.error = more.error();
        if (o.on_diagnostic)
          o.on_diagnostic(more.error().describe() + "; keeping the matches found before this point");
        break;
      }
      if (!more.value()) break;
      if (o.on_progress && pushed - last_report >= static_cast<int64_t>(o.analysis_rate_hz * 10)) {
        last_report = pushed;
        prog.recording_done_s = static_cast<double>(last_report - pad) / o.analysis_rate_hz;
        double within = 0;
        if (prog.recording_total_s && *prog.recording_total_s > 0)
          within = std::min(1.0, prog.recording_done_s / *prog.recording_total_s);
        prog.fraction = (static_cast<double>(ri) + within) / static_cast<double>(nrec);
        o.on_progress(prog);
      }
    }
    if (stream.native_frames_read() > 0) push(edge.data(), edge.size());
    report.decode_s = stream.decode_s();
    report.resample_s = stream.resample_s();
    times.decode_s += report.decode_s;
    times.resample_s += report.resample_s;
    {
      detail::WallTimer timed(times.search_s);
      if (correlator) correlator->finish(sink);
      if (screen) screen->finish();
    }
    if (speed_pass) {
      detail::WallTimer timed(times.speed_scan_s);
      speed_pass->finish();
    }
    if (auto e = src.deferred_error(); e && !report.error) {
      report.error = e;
      if (o.on_diagnostic) o.on_diagnostic(e->describe() + "; the rest of that file read as silence");
    }
    report.duration_s = static_cast<double>(stream.native_frames_read()) / src.info().native_rate_hz;
    if (stream.native_frames_read() == 0 && !report.error)
      report.error = Error{ErrorCode::empty, "recording holds no audio", path, std::nullopt};

    std::vector<std::pair<size_t, Match>> found;
    for (size_t t = 0; t < pickers.size(); ++t) {
      pickers[t].finish();
      for (const auto& c : screen ? screen->take(t) : pickers[t].take()) {
        Match m;
        m.template_id = bank->at(t).id;
        m.recording = path;
        m.offset_s = (c.offset - static_cast<double>(pad)) / o.analysis_rate_hz;
        m.score = c.score;
        m.polarity = c.polarity;
        found.emplace_back(t, std::move(m));
      }
    }
    src_r.value().reset();  // close before reopening for refinement
    if (speed_pass) {
      // With the tempo fit on, only a clear plain detection keeps the
      // speed search away from its airing (speed_refinement.h).
      const bool tempo = o.speed.max_tempo_deviation > 0;
      std::vector<std::pair<size_t, double>> plain;
      for (const auto& [t, m] : found)
        if (!tempo || std::fabs(m.score) >= detail::kClearPlainScore)
          plain.emplace_back(t, m.offset_s * o.analysis_rate_hz + static_cast<double>(pad));
      std::vector<detail::SpeedCandidate> cands;
      {
        detail::WallTimer timed(times.speed_scan_s);
        cands = speed_pass->candidates(plain, report.duration_s);
      }
      detail::WallTimer timed(times.speed_fit_s);
      detail::merge_fits(found, detail::refine_speed_candidates(path, *bank, lo, cands, pad), *bank, o.analysis_rate_hz);
    }
    if (o.refine) {
      detail::WallTimer timed(times.refine_s);
      refine_matches(path, *bank, lo, found);
    }
    std::vector<Match> matches;
    for (auto& f : found) {
      f.second.recording_id = RecordingId{ri};
      matches.push_back(std::move(f.second));
    }
    std::sort(matches.begin(), matches.end(), [](const Match& a, const Match& b) {
      if (a.offset_s != b.offset_s) return a.offset_s < b.offset_s;
      return a.template_id < b.template_id;
    });
    result.matches.insert(result.matches.end(), matches.begin(), matches.end());
    result.recordings.push_back(std::move(report));
    if (o.on_progress) {
      prog.recording_done_s = result.recordings.back().duration_s;
      prog.fraction = static_cast<double>(ri + 1) / static_cast<double>(nrec);
      o.on_progress(prog);
    }
  }
  if (screen) {
    result.screen_candidates = screen->stats().screen_candidates;
    result.exact_spans = screen->stats().spans;
    result.exact_span_masters = screen->stats().span_templates;
    result.times.screen_decimate_s = screen->stats().decimate_s;
    result.times.screen_correlate_s = screen->stats().screen_s;
    result.times.exact_spans_s = screen->stats().spans_s;
  }
  return result;
}

}  // namespace godwit
