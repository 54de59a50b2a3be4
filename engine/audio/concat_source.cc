#include "godwit/audio/concat_source.h"

#include <algorithm>
#include <cmath>

#include "rate_adapter.h"

namespace godwit {

Result<std::unique_ptr<ConcatSource>> ConcatSource::open(std::string name, std::vector<ConcatPart> parts,
                                                          SourceOpener opener, ChannelChoice choice,
                                                          double stream_rate_hz) {
  if (parts.empty()) return Error{ErrorCode::usage, "empty run", name, std::nullopt};
  std::unique_ptr<ConcatSource> s(new ConcatSource());
  s->parts_ = std::move(parts);
  s->opener_ = std::move(opener);
  s->choice_ = choice;
  s->info_.path = std::move(name);
  s->info_.native_rate_hz = stream_rate_hz > 0 ? stream_rate_hz : s->parts_[0].rate_hz;
  if (s->info_.native_rate_hz <= 0) {  // rates not given: the first file says
    auto first = s->opener_(s->parts_[0].path, choice);
    if (!first) return first.error();
    s->info_.native_rate_hz = first.value()->info().native_rate_hz;
  }
  for (const auto& p : s->parts_) {
    s->starts_.push_back(s->total_);
    const double ratio = s->info_.native_rate_hz / (p.rate_hz > 0 ? p.rate_hz : s->info_.native_rate_hz);
    s->total_ += std::max<int64_t>(0, std::llround(static_cast<double>(p.frames - p.skip_frames) * ratio));
  }
  s->info_.native_frames = s->total_;
  s->broken_.assign(s->parts_.size(), false);
  if (auto st = s->open_part(0); !st) return st.error();
  s->info_.format = s->current_->info().format;
  s->info_.channels = s->current_->info().channels;
  return s;
}

Status ConcatSource::open_part(size_t i) {
  auto src = opener_(parts_[i].path, choice_);
  if (!src) return src.error();
  SourcePtr part = std::move(src.value());
  const double rate = part->info().native_rate_hz;
  if (parts_[i].rate_hz > 0 && rate != parts_[i].rate_hz)
    return Error{ErrorCode::corrupt, "sample rate changed since the timeline was planned", parts_[i].path, std::nullopt};
  if (parts_[i].skip_frames > 0) {
    if (auto st = part->seek(parts_[i].skip_frames); !st) return st.error();
  }
  if (rate != info_.native_rate_hz) {
    auto adapted = std::make_unique<RateAdapter>(std::move(part), info_.native_rate_hz);
    part = std::move(adapted);
  }
  current_ = std::move(part);
  index_ = i;
  return ok_status();
}

Result<size_t> ConcatSource::read(float* out, size_t max_frames) { return read_impl(out, max_frames, false); }

Result<size_t> ConcatSource::read_interleaved(float* out, size_t max_frames) {
  return read_impl(out, max_frames, true);
}

Result<size_t> ConcatSource::read_impl(float* out, size_t max_frames, bool interleaved) {
  const size_t width = interleaved ? static_cast<size_t>(std::max(1, info_.channels)) : 1;
  while (pos_ < total_) {
    const int64_t part_end = index_ + 1 < starts_.size() ? starts_[index_ + 1] : total_;
    if (pos_ >= part_end) {
      if (auto st = open_part(index_ + 1); !st) {  // read past it as silence
        defer(st.error());
        broken_[++index_] = true;
      }
      continue;
    }
    const size_t want = static_cast<size_t>(std::min<int64_t>(static_cast<int64_t>(max_frames), part_end - pos_));
    if (broken_[index_]) {
      std::fill(out, out + want * width, 0.0f);
      pos_ += static_cast<int64_t>(want);
      return want;
    }
    const size_t part_width = static_cast<size_t>(std::max(1, current_->info().channels));
    Result<size_t> got = size_t{0};
    if (!interleaved) {
      got = current_->read(out, want);
    } else if (part_width == width) {
      got = current_->read_interleaved(out, want);
    } else {
      // A file with another channel count than the stream's: mono is spread
      // over every channel, more channels fold to their mean (so loudness
      // across such a boundary is indicative at best).
      mixed_.resize(want * part_width);
      got = current_->read_interleaved(mixed_.data(), want);
      if (got) {
        for (size_t i = 0; i < got.value(); ++i) {
          float mean = 0;
          for (size_t c = 0; c < part_width; ++c) mean += mixed_[i * part_width + c];
          mean /= static_cast<float>(part_width);
          for (size_t c = 0; c < width; ++c) out[i * width + c] = part_width == 1 ? mixed_[i] : mean;
        }
      }
    }
    if (!got) {  // a file that breaks part way: the rest of it reads as silence, the run goes on
      defer(got.error());
      broken_[index_] = true;
      continue;
    }
    size_t n = got.value();
    if (n == 0) {  // shorter than stated: silence up to the stated length
      n = want;
      std::fill(out, out + n * width, 0.0f);
    }
    pos_ += static_cast<int64_t>(n);
    return n;
  }
  return size_t{0};
}

void ConcatSource::defer(Error e) {
  if (deferred_) return;  // the first is reported
  e.offset_s = static_cast<double>(pos_) / info_.native_rate_hz;
  deferred_ = std::move(e);
}

Status ConcatSource::seek(int64_t frame) {
  if (frame < 0 || frame > total_) return Error{ErrorCode::usage, "seek beyond the end", info_.path, std::nullopt};
  const size_t i = part_at(static_cast<double>(frame));
  if (i != index_) {
    if (auto st = open_part(i); !st) return st;
  }
  // A resampled part counts its own frames at the stream's rate, skipped ones included.
  const double ratio = info_.native_rate_hz / part_rate(i);
  const int64_t skip = part_rate(i) == info_.native_rate_hz ? parts_[i].skip_frames
                                                            : std::llround(static_cast<double>(parts_[i].skip_frames) * ratio);
  if (auto st = current_->seek(skip + (frame - starts_[i])); !st) return st;
  pos_ = frame;
  return ok_status();
}

size_t ConcatSource::part_at(double frame) const {
  size_t i = 0;
  while (i + 1 < starts_.size() && static_cast<double>(starts_[i + 1]) <= frame) ++i;
  return i;
}

std::pair<size_t, double> ConcatSource::locate_s(double frame) const {
  const size_t i = part_at(frame);
  return {i, static_cast<double>(parts_[i].skip_frames) / part_rate(i) +
                 (frame - static_cast<double>(starts_[i])) / info_.native_rate_hz};
}

double ConcatSource::part_rate_at(double frame) const { return part_rate(part_at(frame)); }

}  // namespace godwit
