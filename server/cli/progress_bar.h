// A progress display on stderr: a redrawn bar on a terminal, else one
// plain line at most every 10 s.
#pragma once

#include <chrono>
#include <string>

#include "godwit/search/job.h"

namespace godwit {

class ProgressBar {
 public:
  explicit ProgressBar(bool terminal);
  void update(const Progress& p);
  void done();

 private:
  bool terminal_;
  bool drawn_ = false;
  std::chrono::steady_clock::time_point start_, last_;
};

}  // namespace godwit
