// DropFolder: recordings that loggers drop are located automatically.
//
//   DROP/incoming  loggers write or move files here
//   DROP/work      a file being processed (claimed by rename)
//   DROP/results   <name>.json, the locate document, written atomically
//   DROP/done      recordings processed
//   DROP/failed    recordings that could not be processed, each with <name>.error.json
//
// A file is taken when it is complete: inotify reported it closed after
// writing or moved in, or (polling, for network shares) its size and
// modification time have not changed for `stable_s`. Files left in work/ by
// a crash are processed again at start. The library is scanned afresh for
// every file, so changes to it apply to the next recording.
//
// Thread contract: owns one thread; start() once, stop() joins it.
#pragma once

#include <atomic>
#include <map>
#include <string>
#include <thread>

#include "job_runner.h"

namespace godwit {

struct DropOptions {
  std::string dir;
  double poll_s = 2;
  double stable_s = 5;
  bool use_inotify = true;
};

class DropFolder {
 public:
  DropFolder(DropOptions options, const JobRunner& runner);
  ~DropFolder();
  Status start();
  void stop();

 private:
  void loop();
  void process(const std::string& name);
  DropOptions o_;
  const JobRunner& runner_;
  std::thread thread_;
  std::atomic<bool> stop_{false};
  int inotify_fd_ = -1;
};

}  // namespace godwit
