// WallTimer: adds the wall time of its scope to a running total, for the
// per-step timings a job reports (LocateResult::StepTimes).
//
// Thread contract: the total must not be written by another thread meanwhile.
#pragma once

#include <chrono>

namespace godwit::detail {

class WallTimer {
 public:
  explicit WallTimer(double& total_s) : total_s_(total_s), t0_(std::chrono::steady_clock::now()) {}
  ~WallTimer() { total_s_ += std::chrono::duration<double>(std::chrono::steady_clock::now() - t0_).count(); }
  WallTimer(const WallTimer&) = delete;
  WallTimer& operator=(const WallTimer&) = delete;

 private:
  double& total_s_;
  std::chrono::steady_clock::time_point t0_;
};

}  // namespace godwit::detail
