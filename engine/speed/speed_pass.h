// SpeedPass: the coarse step of the speed search over one recording at a
// time (speed_search.h): the speed grid, a WarpCorrelator, a PeakPicker per
// (master, speed), and the choice of which peaks are worth refining.
//
// Thread contract: one per job; used from the job's thread.
#pragma once

#include <cstdint>
#include <memory>
#include <vector>

#include "godwit/search/peak_picker.h"
#include "godwit/speed/speed_search.h"
#include "warp_correlator.h"

namespace godwit::detail {

struct SpeedCandidate {
  size_t template_index = 0;
  double offset = 0;      // analysis samples
  double score = 0;       // coarse envelope score
  double speed = 1;       // of the grid point
  double speed_step = 0;  // the master's grid spacing (relative)
};

// The envelope layout the coarse step uses at `rate_hz`.
struct WarpLayout {
  size_t window = 1024;
  size_t frame_hop = 200;
  size_t hop = 400;
};
WarpLayout warp_layout(double rate_hz);

class SpeedPass {
 public:
  // `envelopes[t].envelope/frames` from envelope_of(..., layout.window,
  // layout.hop, layout.hop, ...), one per master in bank order; their
  // `streams` are filled here. Each master long enough also gets its head
  // (speed_search.h: `head_fraction`) as an envelope of its own, whose
  // peaks are the master's candidates: an airing cut short keeps its head
  // whole, where the whole master's envelope matches it only in part.
  SpeedPass(std::vector<WarpTemplate> envelopes, double rate_hz, const SpeedOptions& options, int threads);
  ~SpeedPass();

  void reset();
  void push(const float* x, size_t n);
  void finish();
  // Coarse peaks, strongest first within each master, at most
  // max_candidates_per_hour * hours per master, none within half a
  // master's length of a stronger one or of a plain detection of the same
  // master (`plain`: template index, offset in analysis samples).
  std::vector<SpeedCandidate> candidates(const std::vector<std::pair<size_t, double>>& plain, double duration_s);

 private:
  double rate_hz_;
  SpeedOptions options_;
  std::vector<double> speeds_;
  std::vector<size_t> master_;       // per envelope: the master it belongs to
  std::vector<double> step_;         // per envelope
  std::vector<size_t> frames_;       // per envelope
  std::vector<std::vector<size_t>> streams_;  // per envelope
  std::vector<std::vector<PeakPicker>> pickers_;  // per envelope, per its stream
  std::unique_ptr<WarpCorrelator> correlator_;
  WarpSink sink_;
  PickerOptions picker_options_;
};

}  // namespace godwit::detail
