#include "godwit/compliance/reconcile_job.h"

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <set>
#include <tuple>

#include "godwit/audio/analysis_stream.h"
#include "godwit/audio/concat_source.h"
#include "godwit/audio/resampler.h"
#include "godwit/compliance/version_choice.h"

namespace godwit {
namespace {

// Frames of a source, decoding it when the container does not say.
Result<int64_t> count_frames(AudioSource& src) {
  if (src.info().native_frames) return *src.info().native_frames;
  Samples buf(1 << 16);
  int64_t n = 0;
  for (;;) {
    auto got = src.read(buf.data(), buf.size());
    if (!got) return got.error();
    if (got.value() == 0) return n;
    n += static_cast<int64_t>(got.value());
  }
}

struct Detection {
  size_t master = 0;
  RunId run;
  Match match;
  RecordingId file_id;
  std::string file;
  double file_offset_s = 0;
  LocalSeconds aired_s = 0;
  Profile profile;
  std::optional<double> foreground_contrast, shape_match;
  std::optional<double> spot_lufs, programme_lufs;
};

}  // namespace

std::vector<ConcatPart> run_parts(const Timeline& timeline, size_t run) {
  std::vector<ConcatPart> parts;
  for (const auto& f : timeline.runs.at(run).files)
    parts.push_back({f.path, std::llround(f.duration_s * f.native_rate_hz), std::llround(f.skip_s * f.native_rate_hz),
                     f.native_rate_hz});
  return parts;
}

std::vector<LocalSpan> recorded_spans(const Timeline& timeline, const std::vector<RecordingStatus>& recordings) {
  std::vector<LocalSpan> spans;
  for (const auto& run : timeline.runs)
    for (const auto& f : run.files) {
      LocalSeconds from = f.start_s + f.skip_s, to = f.start_s + f.duration_s;
      if (f.recording.index < recordings.size() && recordings[f.recording.index].error) {
        // Read up to where it broke; nothing of it when that is not known.
        const auto& e = *recordings[f.recording.index].error;
        to = e.offset_s ? std::min(to, f.start_s + *e.offset_s) : from;
      }
      if (to <= from) continue;
      if (!spans.empty() && from <= spans.back().second + 1e-6) spans.back().second = std::max(spans.back().second, to);
      else spans.push_back({from, to});
    }
  std::sort(spans.begin(), spans.end());
  std::vector<LocalSpan> merged;
  for (const auto& s : spans) {
    if (!merged.empty() && s.first <= merged.back().second + 1e-6) merged.back().second = std::max(merged.back().second, s.second);
    else merged.push_back(s);
  }
  return merged;
}

ReconcilePlan plan_reconcile(const ReconcileJob& job, const ReconcileOptions& o) {
  ReconcilePlan plan;
  const SourceOpener& base = o.locate.opener;
  std::vector<TimelineFile> files;
  for (size_t i = 0; i < job.recordings.size(); ++i) {
    const RecordingInput& r = job.recordings[i];
    RecordingStatus st;
    st.path = r.path;
    st.start_s = r.start_s ? r.start_s : time_from_name(std::filesystem::path(r.path).filename().string(), o.name_pattern);
    auto src = base(r.path, o.locate.channel);
    if (!src) {
      st.error = src.error();
    } else if (!st.start_s) {
      st.error = Error{ErrorCode::usage, "no start time: the name does not match '" + o.name_pattern +
                                             "' and none was given", r.path, std::nullopt};
    } else {
      auto frames = count_frames(*src.value());
      st.native_rate_hz = src.value()->info().native_rate_hz;
      st.format = src.value()->info().format;
      st.channels = src.value()->info().channels;
      if (!frames) {
        st.error = frames.error();
      } else if (frames.value() == 0) {
        st.error = Error{ErrorCode::empty, "recording holds no audio", r.path, std::nullopt};
      } else {
        st.duration_s = static_cast<double>(frames.value()) / st.native_rate_hz;
        files.push_back({r.path, *st.start_s, st.duration_s, st.native_rate_hz, 0, RecordingId{i}});
      }
    }
    if (st.error && o.locate.on_diagnostic) o.locate.on_diagnostic(st.error->describe());
    plan.recordings.push_back(std::move(st));
  }
  plan.timeline = build_timeline(files, o.timeline_tolerance_s);
  plan.streams = SearchStreams(plan.timeline, {});
  return plan;
}

Result<ReconcileResult> run_reconcile(const ReconcileJob& job, const ReconcileOptions& options) {
  ReconcileOptions o = options;
  if (!o.locate.masters) o.locate.masters = std::make_shared<MasterLibrary>(o.locate.opener, o.locate.analysis_rate_hz);
  ReconcilePlan plan = plan_reconcile(job, o);
  const SourceOpener& base = o.locate.opener;
  const Timeline& timeline = plan.timeline;
  LocateOptions lo = o.locate;
  lo.opener = plan.streams.opener(timeline, base);
  LocateJob lj;
  lj.templates = job.masters;
  lj.recordings = plan.streams.names();
  LocateResult search;
  if (!lj.recordings.empty()) {
    auto located = run_locate(lj, lo);
    if (!located) return located.error();
    search = std::move(located.value());
  }
  return finish_reconcile(job, std::move(plan), std::move(search), o);
}

Result<ReconcileResult> finish_reconcile(const ReconcileJob& job, ReconcilePlan plan, LocateResult search,
                                         const ReconcileOptions& options,
                                         std::vector<std::optional<DetectionEvidence>> evidence) {
  ReconcileOptions o = options;
  if (!o.locate.masters) o.locate.masters = std::make_shared<MasterLibrary>(o.locate.opener, o.locate.analysis_rate_hz);
  ReconcileResult res;
  res.placements = job.log.placements;
  res.log_problems = job.log.problems;
  res.recordings = std::move(plan.recordings);
  const Timeline& timeline = plan.timeline;
  res.timeline_issues = timeline.issues;

  // 2. The search of the runs.
  std::vector<Match> matches = std::move(search.matches);
  std::vector<TemplateReport> templates = std::move(search.templates);
  for (size_t i = 0; i < search.recordings.size(); ++i) {
    const auto& rr = search.recordings[i];
    const auto run_i = plan.streams.run_of(RecordingId{i});
    if (!rr.error || !run_i || run_i->index >= timeline.runs.size()) continue;
    // Attach a run's failure to the file where it happened.
    const auto& run = timeline.runs[run_i->index];
    Error e = *rr.error;
    RecordingId where = run.files.front().recording;
    if (e.offset_s) {  // run time to the file's own time
      const auto [part, in_file_s] = run.locate_s(*e.offset_s);
      where = run.files[part].recording;
      e.offset_s = in_file_s;
    }
    if (where.index < res.recordings.size() && !res.recordings[where.index].error) res.recordings[where.index].error = e;
  }
  if (templates.empty())
    for (const auto& m : job.masters) templates.push_back({template_id_for(m), m, 0, 0});
  {  // in the job's order of masters, whatever order the search gave
    std::map<std::string, TemplateReport> by_id;
    for (auto& t : templates) by_id[t.id] = std::move(t);
    templates.clear();
    for (const auto& m : job.masters) {
      auto it = by_id.find(template_id_for(m));
      if (it == by_id.end())
        return Error{ErrorCode::internal, "the search does not report master " + template_id_for(m), m, std::nullopt};
      templates.push_back(it->second);
    }
  }

  // 3. Families, from the masters at the analysis rate (or from where the
  // options' source kept them).
  FamilyQuery query;
  for (size_t i = 0; i < job.masters.size(); ++i) {
    query.ids.push_back(template_id_for(job.masters[i]));
    query.paths.push_back(job.masters[i]);
    if (auto it = job.meta.find(query.ids.back()); it != job.meta.end() && !it->second.family.empty())
      query.declared[i] = it->second.family;
  }
  query.rate_hz = o.locate.analysis_rate_hz;
  query.options = o.families;
  query.options.segment_s = o.verify.segment_s;
  auto find = [&]() -> Result<Families> {
    std::vector<Samples> analysis;
    for (const auto& path : query.paths) {
      auto s = o.locate.masters->samples(path, query.rate_hz);
      if (!s) return s.error();
      analysis.push_back(*s.value());
    }
    return find_families(query.ids, analysis, query.rate_hz, query.declared, query.options);
  };
  auto found_families = o.families_source ? o.families_source(query, find) : find();
  if (!found_families) return found_families.error();
  const Families fam = std::move(found_families.value());
  const std::vector<std::string>& ids = query.ids;
  if (fam.family_of.size() != ids.size())
    return Error{ErrorCode::internal, "families of another set of masters", "", std::nullopt};
  {
    std::map<size_t, std::vector<std::string>> groups;
    for (size_t i = 0; i < ids.size(); ++i) groups[fam.family_of[i]].push_back(ids[i]);
    for (auto& [f, g] : groups)
      if (g.size() > 1) res.families.push_back(g);
  }
  std::map<std::string, size_t> index_of;
  for (size_t i = 0; i < ids.size(); ++i) index_of[ids[i]] = i;

  // 4. The evidence of each detection (gathered here unless given).
  if (evidence.size() != matches.size()) {
    evidence.assign(matches.size(), std::nullopt);
    std::map<size_t, std::vector<size_t>> by_run;
    for (size_t i = 0; i < matches.size(); ++i)
      if (auto r = plan.streams.run_of(matches[i].recording_id)) by_run[r->index].push_back(i);
    for (const auto& [run, which] : by_run) {
      if (run >= timeline.runs.size()) continue;
      std::vector<Match> ms;
      for (size_t i : which) ms.push_back(matches[i]);
      auto ev = gather_evidence(templates, run_parts(timeline, run), ms, o);
      for (size_t k = 0; k < which.size(); ++k) evidence[which[k]] = std::move(ev[k]);
    }
  }
  std::vector<Detection> dets;
  for (size_t i = 0; i < matches.size(); ++i) {
    const Match& m = matches[i];
    Detection d;
    d.master = index_of.at(m.template_id);
    const auto run = plan.streams.run_of(m.recording_id);
    if (!run) continue;
    d.run = *run;
    d.match = m;
    if (d.run.index >= timeline.runs.size() || !evidence[i]) continue;
    const auto [part, in_file_s] = timeline.runs[d.run.index].locate_s(m.offset_s);
    const auto& f = timeline.runs[d.run.index].files[part];
    if (evidence[i]->weak) {
      ++res.rejected_weak;
      res.rejected.push_back({m.template_id, f.start_s + in_file_s, m.score, m.speed, evidence[i]->profile.coverage,
                              evidence[i]->aired_score, evidence[i]->foreground_contrast, evidence[i]->shape_match,
                              m.tempo});
      continue;
    }
    d.profile = std::move(evidence[i]->profile);
    d.foreground_contrast = evidence[i]->foreground_contrast;
    d.shape_match = evidence[i]->shape_match;
    d.spot_lufs = evidence[i]->spot_lufs;
    d.programme_lufs = evidence[i]->programme_lufs;
    d.file_id = f.recording;
    d.file = f.path;
    d.file_offset_s = in_file_s;
    d.aired_s = f.start_s + d.file_offset_s;
    dets.push_back(std::move(d));
  }
  std::sort(dets.begin(), dets.end(), [](const Detection& a, const Detection& b) { return a.aired_s < b.aired_s; });
  std::sort(res.rejected.begin(), res.rejected.end(),
            [](const RejectedDetection& a, const RejectedDetection& b) { return a.aired_s < b.aired_s; });

  // 5. One airing per group of overlapping sibling detections.
  std::vector<VersionInput> vin;
  for (const auto& d : dets)
    vin.push_back({d.master, d.aired_s, templates[d.master].duration_s, d.match.score, &d.profile});
  VersionOptions vo;
  vo.min_segment_score = o.verify.min_segment_score;
  vo.margin = o.version_margin;
  for (const VersionChoice& choice : choose_versions(vin, fam, vo)) {
    AiringRecord a;
    if (choice.members.size() > 1)
      for (size_t k = 0; k < choice.members.size(); ++k)
        a.versions.push_back({ids[dets[choice.members[k]].master], choice.distinguishing[k]});
    for (size_t u : choice.undetermined) a.undetermined_among.push_back(ids[dets[u].master]);
    const size_t win = choice.winner;
    const Detection& d = dets[win];
    a.spot = ids[d.master];
    a.recording_id = d.file_id;
    a.recording = d.file;
    a.offset_s = d.file_offset_s;
    a.aired_s = d.aired_s;
    a.score = d.match.score;
    a.polarity = d.match.polarity;
    a.speed = d.match.speed;
    a.tempo = d.match.tempo;
    a.coverage = d.profile.coverage;
    a.missing_s = d.profile.missing_s;
    a.foreground_contrast = d.foreground_contrast;
    a.shape_match = d.shape_match;
    a.profile = d.profile;
    a.run = d.run;
    a.run_offset_s = d.match.offset_s;
    a.length_s = templates[d.master].duration_s;
    a.spot_lufs = d.spot_lufs;  // 6. loudness, in the evidence
    a.programme_lufs = d.programme_lufs;
    res.airings.push_back(std::move(a));
  }

  // 7. Verdicts.
  const std::vector<LocalSpan> recorded = recorded_spans(timeline, res.recordings);
  std::vector<AiringRef> refs;
  for (auto& a : res.airings) {
    double unrecorded_s = 0;
    for (const auto& [from, to] : a.missing_s) {
      const double k = a.time_scale();
      const auto [out, in] = split_by_cover({a.aired_s + from / k, a.aired_s + to / k}, recorded);
      double out_s = 0;
      for (const auto& [f, t] : out) out_s += (t - f) * k;
      if (out_s <= 0) continue;
      // A frame's slop at the recording's edge still counts as unrecorded.
      if (to - from - out_s < 0.5) out_s = to - from;
      a.unrecorded_s.push_back(out.front().first <= a.aired_s + from / k + 1e-6
                                   ? std::pair{from, from + out_s}
                                   : std::pair{to - out_s, to});
      unrecorded_s += out_s;
    }
    const double judged = a.length_s > 0 ? std::min(1.0, a.coverage + unrecorded_s / a.length_s) : a.coverage;
    refs.push_back({a.spot, a.aired_s, judged, a.undetermined_among});
  }
  auto siblings = [&](const std::string& x, const std::string& y) {
    auto ix = index_of.find(x), iy = index_of.find(y);
    return ix != index_of.end() && iy != index_of.end() && fam.siblings(ix->second, iy->second);
  };
  VerdictContext ctx;
  for (const auto& t : templates) ctx.library_length_s[t.id] = t.duration_s;
  ctx.recorded = recorded;
  Reconciliation rec = reconcile(res.placements, refs, siblings, o.verdicts, ctx);
  res.verdicts = std::move(rec.verdicts);
  res.unscheduled = std::move(rec.unscheduled);

  // 8. What the reports need beside the verdicts: the masters with their
  // sidecars, the runs as streams (excerpts), the recorded time.
  for (const auto& t : templates) {
    SpotInfo& s = res.spots[t.id];
    s.path = t.path;
    s.length_s = t.duration_s;
    if (auto it = job.meta.find(t.id); it != job.meta.end()) s.meta = it->second;
  }
  for (size_t i = 0; i < timeline.runs.size(); ++i) res.runs.push_back(run_parts(timeline, i));
  res.recorded = recorded;
  return res;
}

}  // namespace godwit
