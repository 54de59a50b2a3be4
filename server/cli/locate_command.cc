#include "locate_command.h"

#include <cstdio>
#include <iostream>
#include <memory>

#include "atomic_file.h"
#include "engine_options.h"
#include "exit_code.h"
#include "godwit/compliance/timeline_locate.h"
#include "godwit/report/locate_report.h"
#include "godwit/search/job.h"
#include "job_spec.h"
#include "json_text.h"
#include "library_scan.h"

namespace godwit {
namespace {

struct LocateArgs {
  std::vector<std::string> templates;
  std::string library;
  std::vector<std::string> recordings;
  std::string format = "json";
  std::string out;
  std::string name_pattern = "%Y%m%dT%H%M%S";
  bool separate = false;
  bool all_versions = false;
  bool unconfirmed = false;
  EngineArgs engine;
};

int run(const LocateArgs& a) {
  auto fail = [](const Error& e) {
    std::cerr << "godwit: " << e.describe() << "\n";
    return exit_status(exit_code_for(e.code));
  };
  // The job as the daemon holds one (job_spec.h), checked as it checks one.
  LocateSpec spec;
  spec.templates = a.templates;
  if (!a.library.empty()) {
    auto files = scan_library(a.library);
    if (!files) return fail(files.error());
    spec.templates.insert(spec.templates.end(), files.value().begin(), files.value().end());
  }
  if (spec.templates.empty()) return fail({ErrorCode::usage, "give --template FILE... or --library DIR", "", {}});
  spec.recordings = a.recordings;
  spec.search = a.engine.search;
  if (auto st = check_job_spec(spec); !st) return fail({ErrorCode::usage, st.error().message, "", {}});
  const LocateJob job{spec.templates, spec.recordings};

  LocateOptions o;
  EngineSetup setup;
  setup.configure(a.engine, spec.search, o);
  TimelineLocateOptions to;
  to.name_pattern = a.separate ? std::string() : a.name_pattern;
  to.resolve_versions = !a.all_versions;
  to.confirm = !a.unconfirmed;
  auto result = run_locate_job(job, o, to);
  setup.finish();
  if (!result) {
    if (result.error().code == ErrorCode::cancelled) {
      std::cerr << "godwit: interrupted; no output written\n";
      return exit_status(exit_code_for(ErrorCode::cancelled));
    }
    return fail(result.error());
  }
  const LocateResult& r = result.value();
  const std::string doc = a.format == "csv" ? locate_to_csv(r) : json_text(locate_to_json(r), 2) + "\n";
  if (a.out.empty() || a.out == "-") {
    std::fwrite(doc.data(), 1, doc.size(), stdout);
    if (std::fflush(stdout) != 0) return fail({ErrorCode::io, "cannot write to standard output", "", {}});
  } else if (auto st = write_file_atomically(a.out, doc); !st) {
    return fail(st.error());
  }
  size_t failed = 0;
  for (const auto& rec : r.recordings) failed += rec.error ? 1 : 0;
  if (!a.engine.quiet)
    std::cerr << "godwit: " << r.matches.size() << " match(es) in " << r.recordings.size() << " recording(s)"
              << (failed ? ", " + std::to_string(failed) + " with errors (see \"error\" in the output)" : "")
              << "\n";
  // 3 when nothing could be read at all; a recording that broke part way
  // was read up to its break, and its matches are in the output.
  bool any_audio = false;
  for (const auto& rec : r.recordings) any_audio = any_audio || rec.duration_s > 0;
  if (failed == r.recordings.size() && !any_audio) return exit_status(ExitCode::unreadable_input);
  return exit_status(failed ? ExitCode::partial : ExitCode::done);
}

}  // namespace

std::function<int()> add_locate_command(CLI::App& app) {
  auto a = std::make_shared<LocateArgs>();
  auto* cmd = app.add_subcommand("locate", "find where masters occur in recordings");
  cmd->description(
      "Find every place where each master (template) occurs in each recording, by normalized\n"
      "cross-correlation at the analysis rate, with offsets refined at the recording's native rate.\n"
      "Prints JSON (default) or CSV to standard output or --out. Detections are evidence to verify\n"
      "by listening.");
  cmd->add_option("--template,-t", a->templates, "master file(s) to find; id = file stem")->check(CLI::ExistingFile);
  cmd->add_option("--library,-l", a->library, "folder of masters (its audio files, not recursive)");
  cmd->add_option("--recording,-r", a->recordings, "recording(s) to search (WAV, FLAC, OGG, Opus, MP3)")->required();
  cmd->add_option("--format", a->format, "output format: json or csv (default json)")
      ->check(CLI::IsMember({"json", "csv"}));
  cmd->add_option("--out,-o", a->out, "write the output to FILE (atomically) instead of standard output");
  cmd->add_option("--name-pattern", a->name_pattern,
                  "where file names carry their start (%Y %m %d %H %M %S; default %Y%m%dT%H%M%S): recordings that "
                  "all carry one and follow each other are searched as one timeline, so an airing across two files "
                  "is found once, in the file holding its first sample");
  cmd->add_flag("--separate", a->separate, "search every recording on its own, even when their names carry times");
  cmd->add_flag("--all-versions", a->all_versions,
                "report every sibling version detected at an airing as a match of its own, instead of the best "
                "one with the others as its alternatives");
  cmd->add_flag("--unconfirmed", a->unconfirmed,
                "also report detections that fail the confirmation (a foreground that matches worse than the "
                "background: a music bed aired alone, a presenter over the bed)");
  add_engine_options(cmd, a->engine);
  cmd->footer(
      "Exit codes: 0 done; 2 usage error; 3 a master or every recording could not be read;\n"
      "4 done, but some recording failed or broke part way (its error is in the output);\n"
      "5 the output could not be written; 130 interrupted (no output written).");
  return [a]() -> int { return run(*a); };
}

}  // namespace godwit
