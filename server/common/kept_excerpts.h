// Excerpts kept between the reports written into one folder
// (report_files.h): a report rebuilt there (the drop folder's day, remade
// as each hour arrives; a command line run again into its output folder)
// takes each excerpt whose origin (excerpt.h: ExcerptOrigin) is the one it
// was made from, its files unchanged since (size and modification time),
// from the folder it replaces instead of cutting and encoding it again.
//
// The manifest, DIR/.<listen_folder>.json beside the folder:
//   {"excerpts": {"<name>": {"key": origin key, "files": {"<path>": [size, mtime_ns]},
//                            "ref": {"from_s", "duration_s", "rate_hz", "bytes", "envelope": {"step_s", "dbfs"}}}}}
// It is removed before the folder is replaced and written after, so a
// crash between leaves no manifest (everything is made again), never one
// that describes other files.
//
// Thread contract: one report at a time per folder (as report_files.h).
#pragma once

#include <filesystem>
#include <map>
#include <nlohmann/json.hpp>
#include <optional>
#include <string>

#include "godwit/core/error.h"
#include "godwit/report/excerpt.h"

namespace godwit {

class KeptExcerpts {
 public:
  // The manifest of `target` (the folder about to be replaced), when it
  // and the folder are there; then the manifest is removed. Excerpts taken
  // are linked (else copied) into `fresh`.
  KeptExcerpts(std::filesystem::path manifest, std::filesystem::path target, std::filesystem::path fresh);
  // ExcerptOptions::kept.
  std::optional<ExcerptRef> take(const std::string& name, const ExcerptOrigin& origin);
  // The manifest of `made` (its excerpts now in the folder, each asked of
  // take() first), written atomically. An excerpt whose files could not be
  // examined is left out.
  Status write(const Listening& made) const;

 private:
  std::filesystem::path manifest_, target_, fresh_;
  nlohmann::json old_;  // the previous manifest's "excerpts", or null
  std::map<std::string, nlohmann::json> stamps_;  // by name: its files when take() was asked
};

}  // namespace godwit
