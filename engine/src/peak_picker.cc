#include "godwit/peak_picker.h"

#include <algorithm>
#include <cmath>
#include <optional>

#include "noise_floor.h"

namespace godwit {

struct PeakPicker::Impl {
  PickerOptions opt;
  int64_t radius;
  // Trace kept from buf_start on (covers the segment being scanned, one
  // sample before it, and the look-ahead span).
  std::vector<float> buf;
  int64_t buf_start = 0;
  bool started = false;
  // Per-segment statistics; stats[i] is segment stats_first + i.
  std::vector<std::optional<detail::SegmentStats>> stats;
  int64_t stats_first = 0;
  int64_t segments_done = 0;  // segments whose statistics exist
  int64_t next_scan = 0;      // next segment to scan for peaks
  bool finished = false;
  std::optional<Candidate> pending;
  std::vector<Candidate> out;

  int64_t seg_len() const { return static_cast<int64_t>(opt.segment_samples); }
  int64_t buf_end() const { return buf_start + static_cast<int64_t>(buf.size()); }
  float at(int64_t i) const { return buf[static_cast<size_t>(i - buf_start)]; }

  void compute_stats(int64_t seg, int64_t end) {
    const int64_t a = seg * seg_len();
    const int64_t b = std::min(end, a + seg_len());
    stats.push_back(detail::segment_stats(&buf[static_cast<size_t>(a - buf_start)],
                                          static_cast<size_t>(b - a), 4));
    ++segments_done;
  }

  double floor_for(int64_t seg) const {
    const int64_t w = static_cast<int64_t>(opt.span_segments);
    std::vector<double> med, mad;
    for (int64_t s = std::max(stats_first, seg - w); s <= seg + w && s < segments_done; ++s) {
      const auto& st = stats[static_cast<size_t>(s - stats_first)];
      if (!st) continue;
      med.push_back(st->median);
      mad.push_back(st->mad);
    }
    if (med.empty()) return 0.0;
    return std::fabs(detail::median_of(med)) + opt.floor_k * 1.4826 * detail::median_of(mad);
  }

  void offer(const Candidate& c) {
    if (pending && c.index - pending->index < radius) {
      if (std::fabs(c.score) > std::fabs(pending->score)) pending = c;
      return;
    }
    if (pending) out.push_back(*pending);
    pending = c;
  }

  void scan(int64_t seg) {
    const int64_t a = std::max(seg * seg_len(), buf_start);
    const int64_t b = std::min((seg + 1) * seg_len(), buf_end());
    const double thr = std::max(opt.threshold, floor_for(seg));
    for (int64_t i = a; i < b; ++i) {
      const float v = std::fabs(at(i));
      if (v < thr) continue;
      const float prev = i > buf_start ? std::fabs(at(i - 1)) : 0.0f;
      const bool has_next = i + 1 < buf_end();
      const float next = has_next ? std::fabs(at(i + 1)) : 0.0f;
      if (v < prev || v <= next) continue;
      Candidate c;
      c.index = i;
      c.polarity = at(i) < 0 ? -1 : 1;
      c.floor = thr;
      double delta = 0, peak = v;
      if (i > buf_start && has_next) {
        const double y0 = prev, y1 = v, y2 = next;
        const double den = y0 - 2 * y1 + y2;
        if (den < 0) {
          delta = std::clamp(0.5 * (y0 - y2) / den, -0.5, 0.5);
          peak = y1 - 0.25 * (y0 - y2) * delta;
        }
      }
      c.offset = static_cast<double>(i) + delta;
      c.score = c.polarity * std::min(peak, 1.0);
      offer(c);
    }
  }

  void advance() {
    const int64_t w = static_cast<int64_t>(opt.span_segments);
    while (next_scan < segments_done && (finished || next_scan + w < segments_done)) scan(next_scan++);
    // Forget what no later scan needs.
    const int64_t keep_from = std::max<int64_t>(buf_start, next_scan * seg_len() - 1);
    if (keep_from - buf_start > static_cast<int64_t>(8 * opt.segment_samples)) {
      buf.erase(buf.begin(), buf.begin() + (keep_from - buf_start));
      buf_start = keep_from;
    }
    const int64_t stats_keep = std::max<int64_t>(stats_first, next_scan - w);
    if (stats_keep - stats_first > 64) {
      stats.erase(stats.begin(), stats.begin() + (stats_keep - stats_first));
      stats_first = stats_keep;
    }
  }
};

PeakPicker::PeakPicker(size_t suppress_samples, const PickerOptions& options)
    : impl_(std::make_unique<Impl>()) {
  impl_->opt = options;
  if (impl_->opt.segment_samples == 0) impl_->opt.segment_samples = 4096;
  impl_->radius = static_cast<int64_t>(std::max<size_t>(1, suppress_samples));
}

PeakPicker::~PeakPicker() = default;
PeakPicker::PeakPicker(PeakPicker&&) noexcept = default;
PeakPicker& PeakPicker::operator=(PeakPicker&&) noexcept = default;

void PeakPicker::feed(int64_t first, const float* scores, size_t n) {
  Impl& s = *impl_;
  if (!s.started) {
    // Segments are aligned to absolute offsets; the trace starts at `first`.
    s.started = true;
    s.buf_start = first - (first % s.seg_len());
    s.buf.assign(static_cast<size_t>(first - s.buf_start), 0.0f);
    s.stats_first = s.next_scan = s.segments_done = s.buf_start / s.seg_len();
  }
  // Gaps (should not happen) read as "no score".
  if (first > s.buf_end()) s.buf.resize(static_cast<size_t>(first - s.buf_start), 0.0f);
  const int64_t skip = std::max<int64_t>(0, s.buf_end() - first);
  if (skip < static_cast<int64_t>(n)) s.buf.insert(s.buf.end(), scores + skip, scores + n);
  while ((s.segments_done + 1) * s.seg_len() <= s.buf_end()) s.compute_stats(s.segments_done, s.buf_end());
  s.advance();
}

void PeakPicker::finish() {
  Impl& s = *impl_;
  if (s.finished) return;
  if (s.started && s.segments_done * s.seg_len() < s.buf_end()) s.compute_stats(s.segments_done, s.buf_end());
  s.finished = true;
  s.advance();
  if (s.pending) s.out.push_back(*s.pending);
  s.pending.reset();
}

std::vector<Candidate> PeakPicker::take() {
  std::vector<Candidate> c;
  c.swap(impl_->out);
  return c;
}

}  // namespace godwit
