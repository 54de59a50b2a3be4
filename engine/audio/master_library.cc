#include "godwit/audio/master_library.h"

#include "godwit/audio/analysis_stream.h"
#include "godwit/audio/resampler.h"

namespace godwit {

MasterLibrary::MasterLibrary(SourceOpener opener, double analysis_rate_hz, size_t keep_bytes)
    : opener_(std::move(opener)), analysis_rate_hz_(analysis_rate_hz), keep_bytes_(keep_bytes) {}

std::shared_ptr<const Samples> MasterLibrary::find_locked(const Key& key) {
  auto it = kept_.find(key);
  if (it == kept_.end()) return nullptr;
  lru_.splice(lru_.begin(), lru_, it->second.age);
  return it->second.samples;
}

void MasterLibrary::keep_locked(const Key& key, std::shared_ptr<const Samples> samples) {
  const size_t bytes = samples->size() * sizeof(float);
  if (bytes > keep_bytes_ || kept_.count(key)) return;
  while (kept_bytes_ + bytes > keep_bytes_ && !lru_.empty()) {
    auto old = kept_.find(lru_.back());
    kept_bytes_ -= old->second.samples->size() * sizeof(float);
    kept_.erase(old);
    lru_.pop_back();
  }
  lru_.push_front(key);
  kept_.emplace(key, Kept{std::move(samples), lru_.begin()});
  kept_bytes_ += bytes;
}

Result<std::shared_ptr<const Samples>> MasterLibrary::native_locked(const std::string& path) {
  if (auto r = native_rate_.find(path); r != native_rate_.end())
    if (auto s = find_locked({path, r->second})) {
      ++stats_.hits;
      return s;
    }
  auto src = opener_(path, ChannelChoice{});
  if (!src) return src.error();
  const double rate = src.value()->info().native_rate_hz;
  auto decoded = decode_all(*src.value(), 0);  // 0: at its own rate
  if (!decoded) return decoded.error();
  ++stats_.decodes;
  ++decodes_[path];
  native_rate_[path] = rate;
  auto s = std::make_shared<const Samples>(std::move(decoded.value()));
  keep_locked({path, rate}, s);
  return s;
}

Result<std::shared_ptr<const Samples>> MasterLibrary::samples(const std::string& path, double rate_hz) {
  std::shared_ptr<const Samples> native;
  double native_rate = 0;
  {
    std::lock_guard lock(mu_);
    if (auto r = native_rate_.find(path); r != native_rate_.end() && rate_hz > 0 && rate_hz != r->second)
      if (auto s = find_locked({path, rate_hz})) {
        ++stats_.hits;
        return s;
      }
    auto n = native_locked(path);
    if (!n) return n.error();
    native = std::move(n.value());
    native_rate = native_rate_.at(path);
    if (rate_hz <= 0 || rate_hz == native_rate) return native;
    if (rate_hz == analysis_rate_hz_) {  // kept: resampled under the lock, once
      if (auto s = find_locked({path, rate_hz})) {
        ++stats_.hits;
        return s;
      }
      auto s = std::make_shared<const Samples>(resample_all(*native, native_rate, rate_hz));
      ++stats_.resamples;
      keep_locked({path, rate_hz}, s);
      return s;
    }
    ++stats_.resamples;
  }
  return std::make_shared<const Samples>(resample_all(*native, native_rate, rate_hz));
}

Result<double> MasterLibrary::native_rate_hz(const std::string& path) {
  std::lock_guard lock(mu_);
  if (auto r = native_rate_.find(path); r != native_rate_.end()) return r->second;
  auto n = native_locked(path);
  if (!n) return n.error();
  return native_rate_.at(path);
}

MasterLibraryStats MasterLibrary::stats() const {
  std::lock_guard lock(mu_);
  return stats_;
}

size_t MasterLibrary::decodes(const std::string& path) const {
  std::lock_guard lock(mu_);
  auto it = decodes_.find(path);
  return it == decodes_.end() ? 0 : it->second;
}

}  // namespace godwit
