#include "godwit/reconcile_job.h"

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <set>
#include <tuple>

#include "godwit/analysis_stream.h"
#include "godwit/concat_source.h"
#include "godwit/resampler.h"

namespace godwit {
namespace {

constexpr const char* kRunPrefix = "run:";

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
  size_t run = 0;
  double run_offset_s = 0;
  Match match;
  std::string file;
  double file_offset_s = 0;
  LocalSeconds aired_s = 0;
  Profile profile;
};

}  // namespace

std::string run_name(size_t run) { return kRunPrefix + std::to_string(run); }

std::vector<ConcatPart> run_parts(const Timeline& timeline, size_t run) {
  std::vector<ConcatPart> parts;
  for (const auto& f : timeline.runs.at(run).files)
    parts.push_back({f.path, std::llround(f.duration_s * f.native_rate_hz), std::llround(f.skip_s * f.native_rate_hz)});
  return parts;
}

ReconcilePlan plan_reconcile(const ReconcileJob& job, const ReconcileOptions& o) {
  ReconcilePlan plan;
  const SourceOpener& base = o.locate.opener;
  std::vector<TimelineFile> files;
  for (const auto& r : job.recordings) {
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
      if (!frames) {
        st.error = frames.error();
      } else if (frames.value() == 0) {
        st.error = Error{ErrorCode::empty, "recording holds no audio", r.path, std::nullopt};
      } else {
        st.duration_s = static_cast<double>(frames.value()) / st.native_rate_hz;
        files.push_back({r.path, *st.start_s, st.duration_s, st.native_rate_hz, 0});
      }
    }
    if (st.error && o.locate.on_diagnostic) o.locate.on_diagnostic(st.error->describe());
    plan.recordings.push_back(std::move(st));
  }
  plan.timeline = build_timeline(files, o.timeline_tolerance_s);
  return plan;
}

Result<ReconcileResult> run_reconcile(const ReconcileJob& job, const ReconcileOptions& o) {
  ReconcilePlan plan = plan_reconcile(job, o);
  const SourceOpener& base = o.locate.opener;
  const Timeline& timeline = plan.timeline;
  LocateOptions lo = o.locate;
  lo.opener = [&, base](const std::string& path, ChannelChoice choice) -> Result<SourcePtr> {
    if (path.rfind(kRunPrefix, 0) != 0) return base(path, choice);
    const size_t i = std::stoul(path.substr(4));
    auto c = ConcatSource::open(path, run_parts(timeline, i), base, choice);
    if (!c) return c.error();
    return SourcePtr(std::move(c.value()));
  };
  LocateJob lj;
  lj.templates = job.masters;
  for (size_t i = 0; i < timeline.runs.size(); ++i) lj.recordings.push_back(run_name(i));
  LocateResult search;
  if (!lj.recordings.empty()) {
    auto located = run_locate(lj, lo);
    if (!located) return located.error();
    search = std::move(located.value());
  }
  return finish_reconcile(job, std::move(plan), std::move(search), o);
}

Result<ReconcileResult> finish_reconcile(const ReconcileJob& job, ReconcilePlan plan, LocateResult search,
                                         const ReconcileOptions& o) {
  ReconcileResult res;
  res.placements = job.log.placements;
  res.log_problems = job.log.problems;
  res.recordings = std::move(plan.recordings);
  const Timeline& timeline = plan.timeline;
  res.timeline_issues = timeline.issues;
  const SourceOpener& base = o.locate.opener;

  // 2. The search of the runs.
  std::vector<Match> matches = std::move(search.matches);
  std::vector<TemplateReport> templates = std::move(search.templates);
  for (size_t i = 0; i < search.recordings.size() && i < timeline.runs.size(); ++i) {
    const auto& rr = search.recordings[i];
    if (!rr.error) continue;
    // Attach a run's failure to the file where it happened.
    const auto& run = timeline.runs[i];
    std::string where = run.files.front().path;
    if (rr.error->offset_s) {
      double t = *rr.error->offset_s;
      for (const auto& f : run.files) {
        where = f.path;
        if (t < f.duration_s - f.skip_s) break;
        t -= f.duration_s - f.skip_s;
      }
    }
    for (auto& st : res.recordings)
      if (st.path == where && !st.error) st.error = rr.error;
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

  // 3. Masters at the analysis rate: families.
  std::vector<std::string> ids;
  std::vector<Samples> analysis;
  std::map<size_t, std::string> declared;
  for (size_t i = 0; i < job.masters.size(); ++i) {
    ids.push_back(template_id_for(job.masters[i]));
    auto src = base(job.masters[i], ChannelChoice{});
    if (!src) return src.error();
    auto s = decode_all(*src.value(), o.locate.analysis_rate_hz);
    if (!s) return s.error();
    analysis.push_back(std::move(s.value()));
    if (auto it = job.meta.find(ids.back()); it != job.meta.end() && !it->second.family.empty())
      declared[i] = it->second.family;
  }
  FamilyOptions fo = o.families;
  fo.segment_s = o.verify.segment_s;
  const Families fam = find_families(ids, analysis, o.locate.analysis_rate_hz, declared, fo);
  analysis.clear();
  {
    std::map<size_t, std::vector<std::string>> groups;
    for (size_t i = 0; i < ids.size(); ++i) groups[fam.family_of[i]].push_back(ids[i]);
    for (auto& [f, g] : groups)
      if (g.size() > 1) res.families.push_back(g);
  }
  std::map<std::string, size_t> index_of;
  for (size_t i = 0; i < ids.size(); ++i) index_of[ids[i]] = i;

  // One stream per run, opened once, for verification and loudness.
  std::map<size_t, std::unique_ptr<ConcatSource>> run_sources;
  auto run_source = [&](size_t run) -> ConcatSource* {
    auto it = run_sources.find(run);
    if (it == run_sources.end()) {
      auto c = run < timeline.runs.size() ? ConcatSource::open(run_name(run), run_parts(timeline, run), base, o.locate.channel)
                                          : Result<std::unique_ptr<ConcatSource>>(Error{ErrorCode::internal, "no such run", "", std::nullopt});
      it = run_sources.emplace(run, c ? std::move(c.value()) : nullptr).first;
    }
    return it->second.get();
  };

  // 4. Verify each detection at the native rate.
  std::vector<Detection> dets;
  // A master as it aired: at the recording's rate, and at the speed it
  // aired at (decoded at rate / speed, it plays at `rate` as it aired).
  std::map<std::tuple<size_t, double, double>, Samples> native_master;
  for (const auto& m : matches) {
    Detection d;
    d.master = index_of.at(m.template_id);
    d.run = std::stoul(m.recording.substr(4));
    d.match = m;
    ConcatSource* concat = run_source(d.run);
    if (!concat) continue;
    const double rate = concat->info().native_rate_hz;
    auto key = std::make_tuple(d.master, rate, m.speed);
    if (!native_master.count(key)) {
      auto ms = base(job.masters[d.master], ChannelChoice{});
      if (!ms) continue;
      auto s = decode_all(*ms.value(), rate / m.speed);
      if (!s) continue;
      native_master[key] = std::move(s.value());
    }
    const Samples& master = native_master[key];
    const Samples span = read_native_span(*concat, std::llround(m.offset_s * rate), master.size());
    // Segments of segment_s of the master last segment_s / speed on air;
    // the profile is then put back in master time.
    VerifyOptions vo = o.verify;
    vo.segment_s = o.verify.segment_s / m.speed;
    d.profile = verify_airing(master, span, rate, m.polarity, vo);
    d.profile.segment_s = o.verify.segment_s;
    const double length_s = templates[d.master].duration_s;
    for (auto& [from, to] : d.profile.missing_s) {
      from = std::min(from * m.speed, length_s);
      to = std::min(to * m.speed, length_s);
      if (to > length_s - 1e-3) to = length_s;  // a sample's rounding at the end
    }
    // Match quality of the part that aired: a cut-off airing of coverage c
    // scores about q * sqrt(c) overall, q being how well its aired part
    // matches.
    if (d.profile.coverage <= 0 ||
        std::fabs(m.score) / std::sqrt(std::max(d.profile.coverage, 0.05)) < o.min_airing_score) {
      ++res.rejected_weak;
      continue;
    }
    const auto [part, frame] = concat->locate(m.offset_s * rate);
    const auto& f = timeline.runs[d.run].files[part];
    d.file = f.path;
    d.file_offset_s = frame / rate;
    d.aired_s = f.start_s + d.file_offset_s;
    dets.push_back(std::move(d));
  }
  std::sort(dets.begin(), dets.end(), [](const Detection& a, const Detection& b) { return a.aired_s < b.aired_s; });

  // 5. One airing per group of overlapping sibling detections.
  std::vector<bool> taken(dets.size(), false);
  for (size_t i = 0; i < dets.size(); ++i) {
    if (taken[i]) continue;
    std::vector<size_t> group{i};
    taken[i] = true;
    const double len_i = static_cast<double>(templates[dets[i].master].duration_s);
    for (size_t j = i + 1; j < dets.size(); ++j) {
      if (taken[j] || !fam.siblings(dets[i].master, dets[j].master)) continue;
      const double len = std::min(len_i, templates[dets[j].master].duration_s);
      if (std::fabs(dets[j].aired_s - dets[i].aired_s) > 0.5 * len) continue;
      if (std::any_of(group.begin(), group.end(), [&](size_t g) { return dets[g].master == dets[j].master; })) continue;
      group.push_back(j);
      taken[j] = true;
    }
    size_t win = group[0];
    AiringRecord a;
    if (group.size() > 1) {
      double best = -2;
      for (size_t g : group) {
        std::vector<size_t> others;
        for (size_t h : group)
          if (h != g) others.push_back(dets[h].master);
        const double s = mean_over(dets[g].profile, fam.distinguishing(dets[g].master, others));
        a.versions.push_back({ids[dets[g].master], s});
        if (s > best || (s == best && std::fabs(dets[g].match.score) > std::fabs(dets[win].match.score))) {
          best = s;
          win = g;
        }
      }
    }
    if (group.size() > 1) {
      std::vector<double> sc;
      for (const auto& v : a.versions) sc.push_back(v.score);
      const double best = *std::max_element(sc.begin(), sc.end());
      if (best < o.verify.min_segment_score) {
        for (const auto& v : a.versions) a.undetermined_among.push_back(v.spot);
      } else {
        for (const auto& v : a.versions)
          if (best - v.score < o.version_margin) a.undetermined_among.push_back(v.spot);
        if (a.undetermined_among.size() < 2) a.undetermined_among.clear();
      }
    }
    const Detection& d = dets[win];
    a.spot = ids[d.master];
    a.recording = d.file;
    a.offset_s = d.file_offset_s;
    a.aired_s = d.aired_s;
    a.score = d.match.score;
    a.polarity = d.match.polarity;
    a.speed = d.match.speed;
    a.coverage = d.profile.coverage;
    a.missing_s = d.profile.missing_s;
    a.profile = d.profile;
    a.run = d.run;
    a.run_offset_s = d.match.offset_s;
    a.length_s = templates[d.master].duration_s;
    res.airings.push_back(std::move(a));
  }

  // 6. Loudness of each airing and of the programme before it.
  if (o.loudness.enabled) {
    for (auto& a : res.airings) {
      ConcatSource* src = run_source(a.run);
      if (!src) continue;
      const double rate = src->info().native_rate_hz;
      // The aired part: up to the first missing range that reaches the end.
      double aired_s = a.length_s;
      if (!a.missing_s.empty() && a.missing_s.back().second >= a.length_s - 1e-6) aired_s = a.missing_s.back().first;
      aired_s /= a.speed;  // master time to air time
      if (aired_s > 0.4) {
        auto l = measure_span_lufs(*src, std::llround(a.run_offset_s * rate), std::llround(aired_s * rate));
        if (l) a.spot_lufs = l.value();
      }
      const double from_s = std::max(0.0, a.run_offset_s - o.loudness.programme_s);
      if (a.run_offset_s - from_s > 0.4) {
        auto l = measure_span_lufs(*src, std::llround(from_s * rate), std::llround((a.run_offset_s - from_s) * rate));
        if (l) a.programme_lufs = l.value();
      }
    }
  }

  // 7. Verdicts.
  std::vector<AiringRef> refs;
  for (const auto& a : res.airings) refs.push_back({a.spot, a.aired_s, a.coverage, a.undetermined_among});
  auto siblings = [&](const std::string& x, const std::string& y) {
    auto ix = index_of.find(x), iy = index_of.find(y);
    return ix != index_of.end() && iy != index_of.end() && fam.siblings(ix->second, iy->second);
  };
  Reconciliation rec = reconcile(res.placements, refs, siblings, o.verdicts);
  res.verdicts = std::move(rec.verdicts);
  res.unscheduled = std::move(rec.unscheduled);
  for (const auto& p : res.placements)
    if (!index_of.count(p.spot))
      res.log_problems.push_back({p.line, "spot '" + p.spot + "' is not in the library; the slot can only be missing"});
  return res;
}

}  // namespace godwit
