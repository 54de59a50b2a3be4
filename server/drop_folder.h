// DropFolder: recordings that loggers drop are located automatically.
//
//   DROP/incoming  loggers write or move files here
//   DROP/work      a file being processed (claimed by rename)
//   DROP/results   <name>.json, the locate document, written atomically
//   DROP/done      recordings processed
//   DROP/failed    recordings that could not be processed, each with <name>.error.json
//
// A file is taken when it is complete: inotify reported it closed after
// writing or moved in; or, when polling (network shares, use_inotify
// false) and for files already present at start, its size and
// modification time have not changed for `stable_s`. Files left in work/ by
// a crash are processed again at start. The library is scanned afresh for
// every file, so changes to it apply to the next recording. With a
// schedules folder, each day's report is rebuilt as its hours arrive.
//
// Thread contract: owns one thread; start() once, stop() joins it.
#pragma once

#include <atomic>
#include <map>
#include <set>
#include <string>
#include <thread>

#include "job_runner.h"

namespace godwit {

struct DropOptions {
  std::string dir;
  double poll_s = 2;
  double stable_s = 5;
  bool use_inotify = true;
  // When set: after each recording, the day's planned log found here (a
  // CSV whose name holds the date as YYYY-MM-DD or YYYYMMDD) is reconciled
  // against every recording of that day in done/, into
  // results/<log stem>.reconcile.json (and .reconcile.html), so the day's
  // report grows hour by hour.
  std::string schedules;
  std::string name_pattern = "%Y%m%dT%H%M%S";
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
  void reconcile_day(const std::string& name);
  DropOptions o_;
  const JobRunner& runner_;
  JobExecutor executor_;
  std::thread thread_;
  std::atomic<bool> stop_{false};
  int inotify_fd_ = -1;
  std::set<std::string> preexisting_;  // in incoming/ when the watch began
};

}  // namespace godwit
