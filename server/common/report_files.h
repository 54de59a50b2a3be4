// A reconcile job's report files beside its JSON document: the HTML page
// and, unless left out, the folder of excerpts it plays (excerpt.h). Shared
// by the command line, the daemon's jobs and its drop folder.
//
// Layout: DIR/<html_name> and DIR/<listen_folder>/<name>.opus. The
// excerpts are written into a fresh folder (DIR/.<listen_folder>.new) and
// swapped in whole for the previous one, which is only replaced when it
// holds nothing but .opus files (so a folder of someone else's is never
// removed). Excerpts are not fsync'ed: after a power loss a report may
// lack some, never the page or the JSON, which are written atomically.
//
// Thread contract: plain functions; two calls must not share a DIR.
#pragma once

#include <functional>
#include <optional>
#include <string>
#include <string_view>

#include "godwit/report/excerpt.h"
#include "godwit/compliance/reconcile_job.h"

namespace godwit {

struct ReportFiles {
  std::string dir;                        // where the page and the folder go
  std::string html_name = "reconcile.html";
  std::string listen_folder = "listen";   // beside the page; a plain name
  bool excerpts = true;
  std::string log_name;                   // the planned log's stem: the page's heading
};

// Makes the excerpts into DIR/<listen_folder>. Empty when they are off, or
// when this libsndfile cannot write Opus (a warning says so; the report
// goes on without players). An airing or master that cannot be cut is
// named in Listening::problems. Errors: io (the folder cannot be written:
// nothing is swapped in), cancelled.
Result<std::optional<Listening>> write_excerpts(const ReconcileResult& r, const SourceOpener& opener, const ReportFiles& files,
                                                const std::function<bool()>& should_stop,
                                                const std::function<void(std::string_view)>& warn);

// The page, made now by this build (html_report.h).
std::string report_html(const ReconcileResult& r, const ReportFiles& files, const LoudnessOptions& loudness,
                        const Listening* listening);

// write_excerpts, then the page written atomically to DIR/<html_name>.
// Returns the excerpts for the JSON document. Errors: io, cancelled.
Result<std::optional<Listening>> write_report_files(const ReconcileResult& r, const ReconcileOptions& options,
                                                    const ReportFiles& files, const std::function<bool()>& should_stop,
                                                    const std::function<void(std::string_view)>& warn);

}  // namespace godwit
