#include "godwit/concat_source.h"

#include <algorithm>

namespace godwit {

Result<std::unique_ptr<ConcatSource>> ConcatSource::open(std::string name, std::vector<ConcatPart> parts,
                                                          SourceOpener opener, ChannelChoice choice) {
  if (parts.empty()) return Error{ErrorCode::usage, "empty run", name, std::nullopt};
  std::unique_ptr<ConcatSource> s(new ConcatSource());
  s->parts_ = std::move(parts);
  s->opener_ = std::move(opener);
  s->choice_ = choice;
  s->info_.path = std::move(name);
  for (const auto& p : s->parts_) {
    s->starts_.push_back(s->total_);
    s->total_ += std::max<int64_t>(0, p.frames - p.skip_frames);
  }
  s->info_.native_frames = s->total_;
  if (auto st = s->open_part(0); !st) return st.error();
  s->info_.format = s->current_->info().format;
  s->info_.native_rate_hz = s->current_->info().native_rate_hz;
  s->info_.channels = s->current_->info().channels;
  return s;
}

Status ConcatSource::open_part(size_t i) {
  auto src = opener_(parts_[i].path, choice_);
  if (!src) return src.error();
  if (i > 0 && src.value()->info().native_rate_hz != info_.native_rate_hz)
    return Error{ErrorCode::unsupported, "sample rate differs from the previous file of the run", parts_[i].path,
                 std::nullopt};
  if (parts_[i].skip_frames > 0) {
    if (auto st = src.value()->seek(parts_[i].skip_frames); !st) return st.error();
  }
  current_ = std::move(src.value());
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
      if (auto st = open_part(index_ + 1); !st) return st.error();
      continue;
    }
    const size_t want = static_cast<size_t>(std::min<int64_t>(static_cast<int64_t>(max_frames), part_end - pos_));
    auto got = interleaved ? current_->read_interleaved(out, want) : current_->read(out, want);
    if (!got) return got.error();
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

Status ConcatSource::seek(int64_t frame) {
  if (frame < 0 || frame > total_) return Error{ErrorCode::usage, "seek beyond the end", info_.path, std::nullopt};
  size_t i = 0;
  while (i + 1 < starts_.size() && starts_[i + 1] <= frame) ++i;
  if (i != index_) {
    if (auto st = open_part(i); !st) return st;
  }
  if (auto st = current_->seek(parts_[i].skip_frames + (frame - starts_[i])); !st) return st;
  pos_ = frame;
  return ok_status();
}

std::pair<size_t, double> ConcatSource::locate(double frame) const {
  size_t i = 0;
  while (i + 1 < starts_.size() && static_cast<double>(starts_[i + 1]) <= frame) ++i;
  return {i, static_cast<double>(parts_[i].skip_frames) + frame - static_cast<double>(starts_[i])};
}

}  // namespace godwit
