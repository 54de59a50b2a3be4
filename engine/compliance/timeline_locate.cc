#include "godwit/compliance/timeline_locate.h"

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <map>
#include <set>

#include "godwit/audio/analysis_stream.h"
#include "godwit/compliance/civil_time.h"
#include "godwit/compliance/reconcile_job.h"

namespace godwit {
namespace {

// Files without a time in their name are laid this far apart: never
// consecutive, so each is its own run.
constexpr double kApart_s = 1e9;

// Every detection of the runs confirmed as reconcile confirms it
// (gather_evidence: verification profile, foreground contrast), then
// sibling versions detected at one airing resolved; in place (`matches`
// are the search's: streams and their offsets). Returns how many were not
// confirmed.
size_t confirm_and_resolve(std::vector<Match>& matches, const std::vector<TemplateReport>& templates,
                           const Timeline& timeline, const SearchStreams& streams, const LocateOptions& o,
                           const TimelineLocateOptions& t,
                           std::vector<std::optional<DetectionEvidence>> given) {
  std::map<std::string, size_t> tindex;
  for (size_t i = 0; i < templates.size(); ++i) tindex[templates[i].id] = i;
  ReconcileOptions ro;
  ro.locate = o;
  if (!ro.locate.masters) ro.locate.masters = std::make_shared<MasterLibrary>(o.opener, o.analysis_rate_hz);
  ro.verify = t.verify;
  ro.loudness.enabled = false;
  ro.min_airing_score = t.min_airing_score;
  ro.max_foreground_deficit = t.max_foreground_deficit;
  ro.min_foreground_evidence = t.min_foreground_evidence;
  std::map<size_t, std::vector<size_t>> by_run;  // run -> indices into matches, by offset
  for (size_t i = 0; i < matches.size(); ++i)
    if (auto r = streams.run_of(matches[i].recording_id)) by_run[r->index].push_back(i);
  std::vector<bool> drop(matches.size(), false);
  std::vector<std::optional<DetectionEvidence>> evidence(matches.size());
  const bool have = given.size() == matches.size();
  size_t rejected = 0;
  for (auto& [run, which] : by_run) {
    if (run >= timeline.runs.size()) continue;
    std::sort(which.begin(), which.end(), [&](size_t a, size_t b) { return matches[a].offset_s < matches[b].offset_s; });
    if (!t.confirm && !t.resolve_versions) continue;
    std::vector<std::optional<DetectionEvidence>> ev;
    if (have) {
      for (size_t i : which) ev.push_back(std::move(given[i]));
    } else {
      std::vector<Match> ms;
      for (size_t i : which) ms.push_back(matches[i]);
      ev = gather_evidence(templates, run_parts(timeline, run), ms, ro);
    }
    for (size_t k = 0; k < which.size(); ++k) {
      if (t.confirm && ev[k] && ev[k]->weak) {
        drop[which[k]] = true;
        ++rejected;
        continue;
      }
      if (ev[k]) {
        matches[which[k]].coverage = ev[k]->profile.coverage;
        matches[which[k]].missing_s = ev[k]->profile.missing_s;
      }
      evidence[which[k]] = std::move(ev[k]);
    }
  }
  // Masters detected beside another master's detection: the only ones
  // whose kinship matters.
  std::set<size_t> involved;
  for (const auto& [run, which] : by_run)
    for (size_t x = 0; x < which.size(); ++x) {
      if (drop[which[x]] || !evidence[which[x]]) continue;
      const Match& a = matches[which[x]];
      for (size_t y = x + 1; y < which.size(); ++y) {
        if (drop[which[y]] || !evidence[which[y]]) continue;
        const Match& b = matches[which[y]];
        const double len_a = templates[tindex[a.template_id]].duration_s;
        if (b.offset_s - a.offset_s > 0.5 * len_a) break;  // by offset: none later is closer
        if (b.offset_s - a.offset_s > 0.5 * templates[tindex[b.template_id]].duration_s) continue;
        if (a.template_id == b.template_id) continue;
        involved.insert(tindex[a.template_id]);
        involved.insert(tindex[b.template_id]);
      }
    }
  if (t.resolve_versions && !involved.empty()) {
    std::vector<std::string> ids;
    std::vector<Samples> audio;
    bool decoded = true;
    for (size_t ti : involved) {
      auto d = ro.locate.masters->samples(templates[ti].path, o.analysis_rate_hz);
      if (!d) {
        decoded = false;
        break;
      }
      ids.push_back(templates[ti].id);
      audio.push_back(*d.value());
    }
    if (decoded) {
      FamilyOptions fo = t.families;
      fo.segment_s = t.verify.segment_s;
      const Families fam = find_families(ids, audio, o.analysis_rate_hz, {}, fo);
      audio.clear();
      std::map<std::string, size_t> sub_index;
      for (size_t i = 0; i < ids.size(); ++i) sub_index[ids[i]] = i;
      for (const auto& [run, which] : by_run) {
        std::vector<VersionInput> vin;
        std::vector<size_t> back;  // vin index -> matches index
        for (size_t i : which) {
          if (drop[i] || !evidence[i] || !sub_index.count(matches[i].template_id)) continue;
          const Match& m = matches[i];
          vin.push_back({sub_index.at(m.template_id), m.offset_s, templates[tindex[m.template_id]].duration_s, m.score,
                         &evidence[i]->profile});
          back.push_back(i);
        }
        for (const VersionChoice& c : choose_versions(vin, fam, t.versions)) {
          if (c.members.size() < 2) continue;
          Match& win = matches[back[c.winner]];
          for (size_t k = 0; k < c.members.size(); ++k) {
            const size_t mi = back[c.members[k]];
            if (c.members[k] == c.winner) {
              win.distinguishing = c.distinguishing[k];
              continue;
            }
            win.alternatives.push_back({matches[mi].template_id, matches[mi].score, c.distinguishing[k]});
            drop[mi] = true;
          }
          win.version_undetermined = !c.undetermined.empty();
        }
      }
    }
  }
  std::vector<Match> kept;
  for (size_t i = 0; i < matches.size(); ++i)
    if (!drop[i]) kept.push_back(std::move(matches[i]));
  matches = std::move(kept);
  return rejected;
}

}  // namespace

LocatePlan plan_locate(const LocateJob& job, const LocateOptions& o, const TimelineLocateOptions& t) {
  LocatePlan lp;
  bool timed = !t.name_pattern.empty();  // an empty pattern: every file on its own
  for (const auto& r : job.recordings)
    timed = timed && time_from_name(std::filesystem::path(r).filename().string(), t.name_pattern).has_value();
  ReconcileJob rj;
  rj.masters = job.templates;
  for (size_t i = 0; i < job.recordings.size(); ++i)
    rj.recordings.push_back({job.recordings[i], timed ? std::nullopt : std::optional<LocalSeconds>(static_cast<double>(i) * kApart_s)});
  ReconcileOptions ro;
  ro.locate = o;
  ro.name_pattern = t.name_pattern;
  ro.timeline_tolerance_s = t.tolerance_s;
  lp.plan = plan_reconcile(rj, ro);
  // Files that could not be planned (unreadable, or broken part way) are
  // searched alone, as far as they can be read: their error and the
  // matches found before it are kept.
  for (size_t i = 0; i < lp.plan.recordings.size(); ++i)
    if (lp.plan.recordings[i].error) lp.alone.push_back({RecordingId{i}, lp.plan.recordings[i].path});
  lp.plan.streams = SearchStreams(lp.plan.timeline, lp.alone);
  lp.streams = lp.plan.streams.names();
  return lp;
}

Result<LocateResult> finish_locate(const LocatePlan& lp, LocateResult s, const LocateOptions& o,
                                   const TimelineLocateOptions& t, std::vector<std::optional<DetectionEvidence>> evidence) {
  const Timeline& timeline = lp.plan.timeline;
  const SearchStreams& streams = lp.plan.streams;
  const size_t rejected = confirm_and_resolve(s.matches, s.templates, timeline, streams, o, t, std::move(evidence));

  LocateResult out;
  out.analysis_rate_hz = s.analysis_rate_hz;
  out.unconfirmed = rejected;
  out.templates = std::move(s.templates);
  // Recordings in job order (a RecordingId of the job is a place here), as
  // the plan read them.
  for (const auto& st : lp.plan.recordings) {
    RecordingReport r;
    r.path = st.path;
    r.format = st.format;
    r.native_rate_hz = st.native_rate_hz;
    r.channels = st.channels;
    r.duration_s = st.duration_s;
    r.error = st.error;
    out.recordings.push_back(std::move(r));
  }
  // What the search said about its streams (one report each, in order): a
  // file searched alone as its own search reported it, a run's failure on
  // the file where it happened.
  for (size_t i = 0; i < s.recordings.size(); ++i) {
    RecordingReport& rr = s.recordings[i];
    if (const auto file = streams.alone_of(RecordingId{i})) {
      if (file->index < out.recordings.size()) out.recordings[file->index] = std::move(rr);
      continue;
    }
    const auto run_i = streams.run_of(RecordingId{i});
    if (!rr.error || !run_i || run_i->index >= timeline.runs.size()) continue;
    const TimelineRun& run = timeline.runs[run_i->index];
    // The file where it broke; the files after it were read on (concat_source.h).
    const auto [file, in_file_s] = run.locate_s(rr.error->offset_s.value_or(0));
    const RecordingId where = run.files[file].recording;
    if (where.index >= out.recordings.size()) continue;
    RecordingReport& r = out.recordings[where.index];
    r.error = *rr.error;
    r.error->path = r.path;
    r.error->offset_s = std::max(0.0, in_file_s);
    r.duration_s = std::max(0.0, in_file_s);
  }
  for (auto& m : s.matches) {
    if (const auto file = streams.alone_of(m.recording_id)) {  // a file searched alone: its name is its path
      m.recording_id = *file;
      out.matches.push_back(std::move(m));
      continue;
    }
    const auto run = streams.run_of(m.recording_id);
    if (!run || run->index >= timeline.runs.size()) continue;
    const auto [file, in_file_s] = timeline.runs[run->index].locate_s(m.offset_s);
    const TimelineFile& f = timeline.runs[run->index].files[file];
    m.recording_id = f.recording;
    m.recording = f.path;
    m.offset_s = in_file_s;
    out.matches.push_back(std::move(m));
  }
  std::stable_sort(out.matches.begin(), out.matches.end(), [](const Match& a, const Match& b) {
    if (a.recording_id != b.recording_id) return a.recording_id < b.recording_id;
    if (a.offset_s != b.offset_s) return a.offset_s < b.offset_s;
    return a.template_id < b.template_id;
  });
  return out;
}

Result<LocateResult> run_locate_job(const LocateJob& job, const LocateOptions& o, const TimelineLocateOptions& t) {
  if (job.recordings.empty()) return run_locate(job, o);  // its usage error
  const LocatePlan lp = plan_locate(job, o, t);
  if (lp.plan.timeline.runs.empty()) return run_locate(job, o);  // nothing readable: each recording's own error
  LocateJob lj{job.templates, lp.streams};
  LocateOptions with_masters = o;
  if (!with_masters.masters) with_masters.masters = std::make_shared<MasterLibrary>(o.opener, o.analysis_rate_hz);
  LocateOptions lo = with_masters;
  lo.opener = lp.plan.streams.opener(lp.plan.timeline, o.opener);
  auto searched = run_locate(lj, lo);
  if (!searched) return searched.error();
  return finish_locate(lp, std::move(searched.value()), with_masters, t);
}

}  // namespace godwit
