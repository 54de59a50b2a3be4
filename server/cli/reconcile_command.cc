#include "reconcile_command.h"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <iostream>
#include <map>

#include "atomic_file.h"
#include "engine_options.h"
#include "exit_code.h"
#include "godwit/compliance/reconcile_job.h"
#include "godwit/report/html_report.h"
#include "godwit/report/reconcile_report.h"
#include "godwit/audio/master_library.h"
#include "planned_search.h"
#include "reconcile_record.h"
#include "stored_tasks.h"
#include "job_spec.h"
#include "json_text.h"
#include "reconcile_inputs.h"
#include "report_files.h"

namespace godwit {
namespace {

struct ReconcileArgs {
  // The job as the daemon holds one (job_spec.h): --library, --schedule,
  // --recording, --window-s, --name-pattern, --time-zone, --station, and
  // the search flags (engine.search, copied in when it runs).
  ReconcileSpec spec;
  std::string out;
  std::vector<std::string> formats{"json", "csv", "html"};
  double partial_below = 0.9;
  double horizon_s = -1;  // unset: 3 × the window + 4 minutes
  std::string start;
  double loudness_margin_lu = 2.0;
  double loudness_target_lufs = -23.0;
  bool no_loudness = false;
  bool no_excerpts = false;
  std::string state_dir;  // the store of record (record_store.h); empty: none
  EngineArgs engine;
};

std::string loudness_cell(const AiringRecord& a) {
  char b[48] = "";
  if (a.spot_lufs && a.programme_lufs)
    std::snprintf(b, sizeof b, "%6.1f %+5.1f", *a.spot_lufs, *a.spot_lufs - *a.programme_lufs);
  else if (a.spot_lufs)
    std::snprintf(b, sizeof b, "%6.1f     -", *a.spot_lufs);
  return b;
}

// "  speed 1.0417" when the airing ran at another speed than its master.
std::string speed_note(const AiringRecord& a) {
  char b[48];
  if (std::fabs(a.tempo - 1) >= 1e-6) {
    std::snprintf(b, sizeof b, "  tempo %.4f", a.tempo);
    return b;
  }
  if (std::fabs(a.speed - 1) < 1e-6) return "";
  std::snprintf(b, sizeof b, "  speed %.4f", a.speed);
  return b;
}

void print_table(const ReconcileResult& r) {
  std::printf("%-10s %-26s %-19s %-13s %-23s %9s %6s %5s %12s\n", "slot", "spot", "planned", "status", "aired",
              "dev_s", "score", "cover", "LUFS vs_prog");
  for (const auto& v : r.verdicts) {
    const Placement& p = r.placements[v.placement];
    if (v.airing) {
      const AiringRecord& a = r.airings[*v.airing];
      std::printf("%-10s %-26s %-19s %-13s %-23s %9.3f %6.3f %5.2f %12s%s%s\n", p.slot.c_str(), p.spot.c_str(),
                  p.planned.c_str(), verdict_name(v.status), format_iso8601_local(a.aired_s, 3).c_str(),
                  std::round(v.deviation_s * 1000) / 1000 + 0.0, a.score, a.coverage, loudness_cell(a).c_str(),
                  reported_spot(a, p) != p.spot ? ("  aired: " + a.spot).c_str() : "", speed_note(a).c_str());
    } else {
      std::string note;
      if (v.status == VerdictStatus::not_recorded) {
        for (const auto& [from, to] : v.unrecorded)
          note += (note.empty() ? "  not recorded " : ", ") + format_iso8601_local(from, 0).substr(11) + "-" +
                  format_iso8601_local(to, 0).substr(11);
      } else if (v.status == VerdictStatus::unknown_spot && !v.suggestion.empty()) {
        note = "  did you mean " + v.suggestion + "?";
      }
      std::printf("%-10s %-26s %-19s %-13s%s\n", p.slot.c_str(), p.spot.c_str(), p.planned.c_str(),
                  verdict_name(v.status), note.c_str());
    }
  }
  for (size_t i : r.unscheduled) {
    const AiringRecord& a = r.airings[i];
    std::printf("%-10s %-26s %-19s %-13s %-23s %9s %6.3f %5.2f %12s%s\n", "-", a.spot.c_str(), "-", "unscheduled",
                format_iso8601_local(a.aired_s, 3).c_str(), "-", a.score, a.coverage, loudness_cell(a).c_str(),
                speed_note(a).c_str());
  }
  // Totals: every status that occurred, in report order.
  std::map<VerdictStatus, size_t> count;
  for (const auto& v : r.verdicts) ++count[v.status];
  std::string totals;
  for (VerdictStatus st : all_verdicts())
    if (count[st]) totals += (totals.empty() ? "" : ", ") + std::to_string(count[st]) + " " + verdict_name(st);
  std::printf("total: %zu placements%s%s; %zu unscheduled airings\n", r.verdicts.size(), totals.empty() ? "" : ": ",
              totals.c_str(), r.unscheduled.size());
}

int run(const ReconcileArgs& a) {
  auto fail = [](const Error& e) {
    std::cerr << "godwit: " << e.describe() << "\n";
    return exit_status(exit_code_for(e.code));
  };
  ReconcileSpec spec = a.spec;
  spec.search = a.engine.search;
  if (auto st = check_job_spec(spec); !st) return fail({ErrorCode::usage, st.error().message, "", {}});
  std::vector<std::string> warnings;
  auto job_r = load_reconcile_job(
      {spec.library, spec.schedule, spec.recordings, spec.window_s, a.start, spec.time_zone, "--time-zone"}, warnings);
  for (const auto& w : warnings) warn(w);
  if (!job_r) return fail(job_r.error());
  const ReconcileJob& job = job_r.value();

  ReconcileOptions o;
  EngineSetup setup;
  setup.configure(a.engine, spec.search, o.locate);
  o.name_pattern = spec.name_pattern;
  o.verdicts.partial_below = a.partial_below;
  if (a.horizon_s >= 0) o.verdicts.horizon_s = a.horizon_s;
  o.loudness.enabled = !a.no_loudness;
  o.loudness.louder_margin_lu = a.loudness_margin_lu;
  o.loudness.target_lufs = a.loudness_target_lufs;
  // With a store of record, the search runs as tasks split at the files,
  // each (piece x master) kept and reused (stored_tasks.h): a day searched
  // before is searched again only where something changed.
  std::optional<SearchCounts> searches;
  Result<ReconcileResult> result = Error{ErrorCode::internal, "not run", "", std::nullopt};
  if (a.state_dir.empty()) {
    result = run_reconcile(job, o);
  } else {
    auto store = RecordStore::open(a.state_dir);
    if (!store) return fail(store.error());
    LocateOptions lo = o.locate;
    lo.masters = std::make_shared<MasterLibrary>(lo.opener, lo.analysis_rate_hz);  // each master decoded once
    InProcessTaskRunner here(lo);
    StoredTaskRunner kept(*store.value(), here, search_fingerprint(o.locate));
    PlanOptions plan;
    plan.at_files = true;
    auto report = o.locate.on_progress;
    result = reconcile_by_tasks(
        job, o, kept, plan, "cli", [&](double f) { if (report) {
            Progress pr;
            pr.fraction = f;
            report(pr);
          } }, o.locate.should_stop,
        [](std::string_view w) { warn(w); });
    searches = kept.counts();
  }
  setup.finish();
  if (!result) {
    if (result.error().code == ErrorCode::cancelled) {
      std::cerr << "godwit: interrupted; no output written\n";
      return exit_status(exit_code_for(ErrorCode::cancelled));
    }
    return fail(result.error());
  }
  const ReconcileResult& r = result.value();
  std::error_code ec;
  std::filesystem::create_directories(a.out, ec);
  if (ec) return fail({ErrorCode::io, "cannot create the output folder: " + ec.message(), a.out, {}});
  // Excerpts to listen to, for the page and the JSON (which name them).
  auto wants = [&](const char* f) { return std::find(a.formats.begin(), a.formats.end(), f) != a.formats.end(); };
  ReportFiles files;
  files.dir = a.out;
  files.excerpts = !a.no_excerpts && (wants("html") || wants("json"));
  files.log_name = std::filesystem::path(spec.schedule).stem().string();
  auto listening = write_excerpts(r, o.locate.opener, files, o.locate.should_stop, [](std::string_view w) { warn(w); });
  if (!listening && listening.error().code == ErrorCode::cancelled) {
    std::cerr << "godwit: interrupted; no output written\n";
    return exit_status(exit_code_for(ErrorCode::cancelled));
  }
  if (!listening) return fail(listening.error());
  const Listening* heard = listening.value() ? &*listening.value() : nullptr;
  for (const auto& f : a.formats) {
    const std::string path = (std::filesystem::path(a.out) / ("reconcile." + f)).string();
    std::string doc;
    if (f == "csv") doc = reconcile_to_csv(r);
    else if (f == "html") doc = report_html(r, files, o.loudness, heard);
    else {
      nlohmann::json j = reconcile_to_json(r, o.loudness, heard);
      if (searches) j["searches"] = searches->to_json();  // (piece x master) searches run and reused
      doc = json_text(j, 2) + "\n";
    }
    if (auto st = write_file_atomically(path, doc); !st) return fail(st.error());
  }
  print_table(r);
  if (!a.state_dir.empty()) {
    RecordContext rc;
    rc.station = spec.station;
    rc.time_zone = spec.time_zone;
    rc.schedule = spec.schedule;
    if (auto st = record_reconcile_in(a.state_dir, r, o, rc); !st) {
      std::cerr << "godwit: the store of record was not written: " << st.error().describe() << "\n";
      return exit_status(ExitCode::io);
    }
  }
  size_t unknown = 0, not_recorded = 0;
  for (const auto& v : r.verdicts) {
    const Placement& p = r.placements[v.placement];
    if (v.status == VerdictStatus::not_recorded) ++not_recorded;
    if (v.status != VerdictStatus::unknown_spot) continue;
    if (++unknown <= 10)
      warn(spec.schedule + ":" + std::to_string(p.line) + ": spot '" + p.spot + "' is not in the library" +
           (v.suggestion.empty() ? std::string() : "; did you mean '" + v.suggestion + "'?"));
  }
  if (unknown > 10) warn(std::to_string(unknown - 10) + " more placements name spots that are not in the library");
  const size_t judged = r.verdicts.size() - unknown;
  const bool mostly_unrecorded = judged > 0 && 2 * not_recorded > judged;
  if (mostly_unrecorded)
    warn(std::to_string(not_recorded) + " of " + std::to_string(judged) +
         " placements fall outside the recorded time: do the planned log's dates match the recordings'?");
  size_t failed = 0;
  for (const auto& s : r.recordings) failed += s.error ? 1 : 0;
  for (const auto& t : r.timeline_issues)
    warn(std::string("timeline ") + timeline_issue_name(t.kind) + " of " + std::to_string(t.seconds) + " s between " +
         t.before + " and " + t.after);
  if (!a.engine.quiet) {
    std::cerr << "godwit: report written to " << a.out << "\n";
    if (searches)
      std::fprintf(stderr, "godwit: %zu (piece x master) searches run, %zu reused from the store; evidence of %zu "
                   "detections gathered, %zu reused\n", searches->searched, searches->reused,
                   searches->evidence_gathered, searches->evidence_reused);
    if (heard && !heard->airings.empty()) {
      size_t bytes = 0;
      for (const auto& [i, e] : heard->airings) bytes += e.bytes;
      std::fprintf(stderr, "godwit: %zu airing excerpts (%.1f KB each on average) and %zu masters in %s/%s\n",
                   heard->airings.size(), static_cast<double>(bytes) / 1000.0 / static_cast<double>(heard->airings.size()),
                   heard->masters.size(), a.out.c_str(), files.listen_folder.c_str());
    }
    std::cerr << kEvidenceCaution << "\n" << kLoudnessCaution << "\n";
  }
  bool any_audio = false;  // a recording that broke part way was read up to its break
  for (const auto& s : r.recordings) any_audio = any_audio || s.duration_s > 0;
  if (!r.recordings.empty() && failed == r.recordings.size() && !any_audio) return exit_status(ExitCode::unreadable_input);
  if (mostly_unrecorded) return exit_status(ExitCode::mostly_not_recorded);
  return exit_status(failed ? ExitCode::partial : ExitCode::done);
}

}  // namespace

std::function<int()> add_reconcile_command(CLI::App& app) {
  auto a = std::make_shared<ReconcileArgs>();
  a->spec.name_pattern = ReconcileOptions{}.name_pattern;  // shown in --help as the default
  auto* cmd = app.add_subcommand("reconcile", "give each planned placement a verdict from the airchecks");
  cmd->description(
      "Locate the library's masters in the airchecks (consecutive files form one timeline; spots across\n"
      "file boundaries are found), verify each airing (coverage, version among siblings), and give each\n"
      "placement of the planned log a verdict: aired, early, late, partial, wrong_version, missing,\n"
      "not_recorded (its window was not wholly recorded) or unknown_spot (not in the library);\n"
      "airings matching no placement are listed as unscheduled. Writes OUT/reconcile.json and\n"
      "OUT/reconcile.csv and OUT/reconcile.html (a page that opens offline) with OUT/listen/, an excerpt of\n"
      "every airing (2 s either side) and its master to play from the page, and prints the verdicts.\n"
      "Detections are evidence to verify by listening.");
  cmd->add_option("--library,-l", a->spec.library, "folder of masters; sidecar <stem>.meta.json optional")->required();
  cmd->add_option("--schedule,-s", a->spec.schedule,
                  "planned log CSV (comma, semicolon or tab): slot,spot,planned[,window_s] or their aliases")
      ->required();
  cmd->add_option("--recording,-r", a->spec.recordings, "airchecks, start time in the file name")->required();
  cmd->add_option("--out,-o", a->out, "output folder (created if needed)")->required();
  cmd->add_option("--format", a->formats, "documents to write: json, csv, html (default all three)")
      ->check(CLI::IsMember({"json", "csv", "html"}))
      ->delimiter(',');
  cmd->add_option("--window-s", a->spec.window_s, "allowed deviation when a row leaves window_s empty (default 60)")
      ->check(cli_range(kWindowSRange));
  cmd->add_option("--partial-below", a->partial_below, "coverage under this is a partial airing (default 0.9)")
      ->check(CLI::Range(0.0, 1.0));
  cmd->add_option("--horizon-s", a->horizon_s,
                  "airings farther than this from a placement are not its (default: 3 x its window + 240 s)")
      ->check(CLI::Range(0.0, 7 * 86400.0));
  cmd->add_option("--name-pattern", a->spec.name_pattern,
                  "where file names carry the start: %Y %m %d %H %M %S (default %Y%m%dT%H%M%S)");
  cmd->add_option("--start", a->start, "start of a single recording (ISO 8601 local), instead of its name");
  cmd->add_option("--time-zone", a->spec.time_zone,
                  "the station's IANA time zone (Europe/Berlin): planned times written with a UTC offset or Z\n"
                  "are converted to its local time (without it such rows are rejected)");
  cmd->add_option("--loudness-margin-lu", a->loudness_margin_lu,
                  "flag a spot louder than the 5 minutes of programme before it by more than this (default 2 LU)")
      ->check(CLI::Range(0.0, 40.0));
  cmd->add_option("--loudness-target-lufs", a->loudness_target_lufs,
                  "target to report each spot's gap to (default -23, EBU R128; ATSC A/85: -24)")
      ->check(CLI::Range(-70.0, 0.0));
  cmd->add_flag("--no-loudness", a->no_loudness, "skip the loudness measurements");
  cmd->add_flag("--no-excerpts", a->no_excerpts,
                "write no OUT/listen/ excerpts (Opus, mono, about 37 KB per 30 s airing) and no players in the page");
  cmd->add_option("--state-dir", a->state_dir,
                  "also keep the result in the store of record DIR/store.sqlite (for `godwit airings` and\n"
                  "`godwit proof`); re-running a day replaces its rows");
  cmd->add_option("--station", a->spec.station,
                  "with --state-dir: the station's name (default: the recordings' file names before their\n"
                  "timestamp, kestrel-fm-20260314T060000.flac -> kestrel-fm)");
  add_engine_options(cmd, a->engine);
  cmd->footer(
      "Planned log: the delimiter (comma, semicolon, tab) is read from the header; column names ignore\n"
      "case and aliases are accepted (README, planned log). Times: 2026-03-14T06:15:00, 2026-03-14 06:15,\n"
      "fractions, and with --time-zone a UTC offset (+02:00, +0200, -05) or Z.\n"
      "Exit codes: 0 done; 2 usage error (bad log header, unknown time zone, options); 3 a master or every\n"
      "recording could not be read; 4 done, but some recording failed; 5 a report could not be written;\n"
      "8 the planned log has no valid row (every row's reason is printed); 9 done, but most placements fall\n"
      "outside the recorded time (the log's dates and the recordings' disagree); 130 interrupted.\n"
      "With --state-dir, 5 also when the store of record could not be written (the report files were).");
  return [a]() -> int { return run(*a); };
}

}  // namespace godwit
