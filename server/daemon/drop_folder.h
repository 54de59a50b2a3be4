// DropFolder: recordings that loggers drop are located automatically.
//
//   DROP/incoming  loggers write or move files here
//   DROP/work      a file being processed (claimed by rename)
//   DROP/results   <name>.json, the locate document, written atomically
//   DROP/done      recordings processed
//   DROP/failed    recordings that could not be processed, each with <name>.error.json
//
// A file is taken when it is complete: its size and modification time have
// not changed for `stable_s` and, with inotify, it was closed after writing
// or moved in (a writer that appends in chunks closes it after each; a
// file already there at start gets no event). Names starting with "." or
// ending in ".part", ".tmp" or "~" are a writer's temporaries and left
// alone. A claimed file keeps its name unless an earlier file had it
// (then "-2", "-3"... before the extension), so no result is overwritten.
// Links (which may lead anywhere), folders, pipes and other entries that
// are not regular files are moved to failed/ unprocessed, with their
// reason, once unchanged for `stable_s`. Files left in work/ by a crash
// are processed again at start (links there are set aside too). The library is scanned afresh for
// every file, so changes to it apply to the next recording. With a
// schedules folder, each day's report is rebuilt as its hours arrive.
//
// Thread contract: owns one thread; start() once, stop() joins it.
#pragma once

#include <atomic>
#include <filesystem>
#include <optional>
#include <map>
#include <set>
#include <string>
#include <thread>

#include "job_runner.h"

namespace godwit {

struct DropOptions {
  std::string dir;
  double poll_s = 2;
  double stable_s = 5;  // a file unchanged this long is complete (with inotify: and closed)
  bool use_inotify = true;
  // When set: after each recording, the day's planned log found here (a
  // CSV whose name holds the date as YYYY-MM-DD or YYYYMMDD) is reconciled
  // against every recording of that day in done/, into
  // results/<log stem>.reconcile.json (and .reconcile.html, with the
  // excerpts it plays in results/<log stem>.listen/), so the day's
  // report grows hour by hour.
  std::string schedules;
  std::string name_pattern = "%Y%m%dT%H%M%S";
  // The station whose folder this is (station_config.h): its library is
  // searched, its zone reads the planned logs, and the day's
  // reconciliation is filed under its name in the store of record (empty:
  // named by the files, and the runner's library and zone). A named
  // station's job ids carry its name ("drop-<station>-<file>",
  // "drop-day-<station>-<day>"), so two stations' files of the same name
  // never share a job (nor, in queue mode, its tasks).
  std::string station;
  std::string library;    // empty: the runner's default library
  std::string time_zone;  // empty: the runner's
};

class DropFolder {
 public:
  // `executor` runs each file's locate job and the day's reconciliation
  // (empty: the runner, here); in queue mode it spreads them over the
  // cluster.
  DropFolder(DropOptions options, const JobRunner& runner, JobExecutor executor = nullptr);
  ~DropFolder();
  Status start();
  void stop();

 private:
  void loop();
  // Runs process_file(); an exception fails that file, not the daemon.
  void process(const std::string& name);
  void process_file(const std::string& name);
  // Why `p` (not followed if a link) is not a regular file; empty if it is.
  static std::optional<std::string> not_regular(const std::filesystem::path& p);
  static bool is_temporary_name(const std::string& name);
  // `name`, or name-2.ext, name-3.ext... : the first no file here has had
  // (`itself`, the entry being moved, aside).
  std::string unused_name(const std::string& name, const std::filesystem::path& itself = {}) const;
  // Moves an entry to failed/ with <name>.error.json saying `why`, and logs it.
  void reject(const std::filesystem::path& from, const std::string& why);
  void reconcile_day(const std::string& name);
  DropOptions o_;
  // How its log lines begin: "drop folder", or "drop folder (station S)"
  // for a named station, so that every line says whose folder it is.
  std::string who_;
  const JobRunner& runner_;
  JobExecutor executor_;
  std::thread thread_;
  std::atomic<bool> stop_{false};
  int inotify_fd_ = -1;
  std::set<std::string> preexisting_;  // in incoming/ when the watch began
};

}  // namespace godwit
