#include "godwit/search/peak_picker.h"

#include <algorithm>
#include <cmath>
#include <map>
#include <optional>

#include "noise_floor.h"

namespace godwit {

struct PeakPicker::Impl {
  PickerOptions opt;
  int64_t radius;
  // Trace kept from buf_start on: the span behind the segment being
  // scanned (for its floor), that segment, and the span ahead.
  std::vector<float> buf;
  int64_t buf_start = 0;
  bool started = false;
  // Segment statistics, computed only for segments whose floor is needed
  // (near a peak that clears the absolute threshold): most never are.
  std::map<int64_t, std::optional<detail::SegmentStats>> stats;
  int64_t next_scan = 0;  // next segment to scan for peaks
  bool finished = false;
  std::optional<Candidate> pending;
  std::vector<Candidate> out;

  int64_t seg_len() const { return static_cast<int64_t>(opt.segment_samples); }
  int64_t span() const { return static_cast<int64_t>(opt.span_segments); }
  int64_t buf_end() const { return buf_start + static_cast<int64_t>(buf.size()); }
  float at(int64_t i) const { return buf[static_cast<size_t>(i - buf_start)]; }
  // Segments whose samples are all present (or, once finished, any).
  int64_t segments_available() const {
    return finished ? (buf_end() + seg_len() - 1) / seg_len() : buf_end() / seg_len();
  }

  const std::optional<detail::SegmentStats>& stats_of(int64_t seg) {
    auto it = stats.find(seg);
    if (it != stats.end()) return it->second;
    const int64_t a = std::max(seg * seg_len(), buf_start);
    const int64_t b = std::min(buf_end(), (seg + 1) * seg_len());
    std::optional<detail::SegmentStats> st;
    if (b > a) st = detail::segment_stats(&buf[static_cast<size_t>(a - buf_start)], static_cast<size_t>(b - a), 16);
    return stats.emplace(seg, st).first->second;
  }

  double floor_for(int64_t seg) {
    std::vector<double> med, mad;
    const int64_t first = std::max(seg - span(), buf_start / seg_len());
    const int64_t last = std::min(seg + span(), segments_available() - 1);
    for (int64_t s = first; s <= last; ++s) {
      const auto& st = stats_of(s);
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
    // Most segments hold nothing near the threshold: one vectorizable pass
    // over the absolute values decides before the floor is even computed.
    const float peak_abs = detail::max_abs(buf.data() + (a - buf_start), static_cast<size_t>(b - a));
    if (peak_abs < opt.threshold) return;
    const double thr = std::max(opt.threshold, floor_for(seg));
    if (peak_abs < thr) return;
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
    while (next_scan < segments_available() && (finished || next_scan + span() < segments_available()))
      scan(next_scan++);
    // A candidate no later sample can displace (none within `radius` is
    // left to scan) is settled: out now, so a caller streaming the trace
    // sees it without waiting for the next candidate or the end.
    if (pending && next_scan * seg_len() >= pending->index + radius) {
      out.push_back(*pending);
      pending.reset();
    }
    // Forget what no later scan needs: the span behind the next segment.
    const int64_t keep_seg = next_scan - span();
    const int64_t keep_from = std::clamp<int64_t>(keep_seg * seg_len() - 1, buf_start, buf_end());
    // Erase only when the dead part is as long as the live one: each sample
    // is then moved about once.
    if (keep_from - buf_start > (2 * span() + 1) * seg_len()) {
      buf.erase(buf.begin(), buf.begin() + (keep_from - buf_start));
      buf_start = keep_from;
    }
    while (!stats.empty() && stats.begin()->first < keep_seg) stats.erase(stats.begin());
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
    s.next_scan = s.buf_start / s.seg_len();
  }
  // Gaps (should not happen) read as "no score".
  if (first > s.buf_end()) s.buf.resize(static_cast<size_t>(first - s.buf_start), 0.0f);
  size_t i = static_cast<size_t>(std::max<int64_t>(0, s.buf_end() - first));
  // A segment at a time, so the buffer stays a few spans long however many
  // scores one call brings (a block can bring minutes of them).
  while (i < n) {
    const size_t take = std::min(n - i, s.opt.segment_samples);
    s.buf.insert(s.buf.end(), scores + i, scores + i + take);
    i += take;
    s.advance();
  }
}

void PeakPicker::finish() {
  Impl& s = *impl_;
  if (s.finished) return;
  s.finished = true;
  if (s.started) s.advance();
  if (s.pending) s.out.push_back(*s.pending);
  s.pending.reset();
}

std::vector<Candidate> PeakPicker::take() {
  std::vector<Candidate> c;
  c.swap(impl_->out);
  return c;
}

}  // namespace godwit
