#include "godwit/job.h"

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <map>
#include <set>

#include "godwit/analysis_stream.h"
#include "godwit/native_refiner.h"

namespace godwit {
namespace {

Result<std::shared_ptr<const TemplateBank>> load_bank(const LocateJob& job, const LocateOptions& o,
                                                      std::vector<TemplateReport>& reports) {
  if (job.templates.empty()) return Error{ErrorCode::usage, "no templates given", "", std::nullopt};
  std::vector<TemplateInput> inputs;
  std::map<std::string, std::string> seen;
  for (const auto& path : job.templates) {
    const std::string id = template_id_for(path);
    if (auto it = seen.find(id); it != seen.end())
      return Error{ErrorCode::usage, "two masters share the id '" + id + "': " + it->second + " and " + path,
                   path, std::nullopt};
    seen[id] = path;
    auto src = o.opener(path, ChannelChoice{});
    if (!src) return src.error();
    auto samples = decode_all(*src.value(), o.analysis_rate_hz);
    if (!samples) return samples.error();
    const double dur_s = static_cast<double>(samples.value().size()) / o.analysis_rate_hz;
    if (dur_s < kMinTemplateSeconds)
      return Error{ErrorCode::invalid_template,
                   "master is " + std::to_string(dur_s) + " s long; the shortest accepted is 0.5 s", path,
                   std::nullopt};
    TemplateInput in;
    in.id = id;
    in.path = path;
    in.native_rate_hz = src.value()->info().native_rate_hz;
    in.samples = std::move(samples.value());
    inputs.push_back(std::move(in));
  }
  auto bank = TemplateBank::build(std::move(inputs), o.bank);
  if (!bank) return bank.error();
  for (const auto& t : bank.value()->templates())
    reports.push_back({t.id, t.path, static_cast<double>(t.len_samples) / o.analysis_rate_hz, t.fft_size});
  return bank;
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
  std::set<size_t> templates;
  for (const auto& f : found) templates.insert(f.first);
  for (size_t t : templates) {
    const auto& info = bank.at(t);
    auto msrc = o.opener(info.path, ChannelChoice{});
    if (!msrc) continue;
    auto master = decode_all(*msrc.value(), native);
    if (!master) continue;
    const Samples& tmpl = master.value();
    for (auto& [ti, m] : found) {
      if (ti != t) continue;
      const double coarse = m.offset_s * native;
      int64_t start = static_cast<int64_t>(std::floor(coarse)) - radius;
      if (start < 0) start = 0;
      const size_t want = tmpl.size() + static_cast<size_t>(2 * radius + 1);
      const Samples span = read_native_span(src, start, want);
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
  auto bank_r = load_bank(job, lo, result.templates);
  if (!bank_r) return bank_r.error();
  std::shared_ptr<const TemplateBank> bank = bank_r.value();
  Correlator correlator(bank, copt);
  const size_t nrec = job.recordings.size();

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
    correlator.reset();
    std::vector<PeakPicker> pickers;
    for (const auto& t : bank->templates()) pickers.emplace_back(t.len_samples, o.picker);
    ScoreSink sink = [&](size_t t, int64_t first, const float* s, size_t n) { pickers[t].feed(first, s, n); };

    AnalysisStream stream(src, o.analysis_rate_hz);
    Samples block;
    Progress prog;
    prog.recording_index = ri;
    prog.recordings = nrec;
    prog.recording_total_s = src.info().duration_s();
    int64_t last_report = 0;
    for (;;) {
      if (o.should_stop && o.should_stop())
        return Error{ErrorCode::cancelled, "cancelled", path, static_cast<double>(correlator.samples_pushed()) / o.analysis_rate_hz};
      auto more = stream.next(block);
      if (!block.empty()) correlator.push(block.data(), block.size(), sink);
      if (!more) {
        report.error = more.error();
        if (o.on_diagnostic)
          o.on_diagnostic(more.error().describe() + "; keeping the matches found before this point");
        break;
      }
      if (!more.value()) break;
      if (o.on_progress && correlator.samples_pushed() - last_report >= static_cast<int64_t>(o.analysis_rate_hz * 10)) {
        last_report = correlator.samples_pushed();
        prog.recording_done_s = static_cast<double>(last_report) / o.analysis_rate_hz;
        double within = 0;
        if (prog.recording_total_s && *prog.recording_total_s > 0)
          within = std::min(1.0, prog.recording_done_s / *prog.recording_total_s);
        prog.fraction = (static_cast<double>(ri) + within) / static_cast<double>(nrec);
        o.on_progress(prog);
      }
    }
    correlator.finish(sink);
    report.duration_s = static_cast<double>(stream.native_frames_read()) / src.info().native_rate_hz;
    if (stream.native_frames_read() == 0 && !report.error)
      report.error = Error{ErrorCode::empty, "recording holds no audio", path, std::nullopt};

    std::vector<std::pair<size_t, Match>> found;
    for (size_t t = 0; t < pickers.size(); ++t) {
      pickers[t].finish();
      for (const auto& c : pickers[t].take()) {
        Match m;
        m.template_id = bank->at(t).id;
        m.recording = path;
        m.offset_s = c.offset / o.analysis_rate_hz;
        m.score = c.score;
        m.polarity = c.polarity;
        found.emplace_back(t, std::move(m));
      }
    }
    src_r.value().reset();  // close before reopening for refinement
    if (o.refine) refine_matches(path, *bank, o, found);
    std::vector<Match> matches;
    for (auto& f : found) matches.push_back(std::move(f.second));
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
  return result;
}

}  // namespace godwit
