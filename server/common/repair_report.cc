#include "repair_report.h"

#include <cstdio>
#include <memory>
#include <mutex>
#include <set>
#include <string>

namespace godwit {
namespace {

struct Reported {
  std::mutex mu;
  std::set<std::string> paths;  // GUARDED_BY(mu)
};

class ReportingSource final : public AudioSource {
 public:
  ReportingSource(SourcePtr inner, std::function<void(std::string_view)> warn, std::shared_ptr<Reported> reported)
      : inner_(std::move(inner)), warn_(std::move(warn)), reported_(std::move(reported)) {}
  ~ReportingSource() override {
    const int64_t n = inner_->repaired_samples();
    if (n == 0 || !warn_) return;
    {
      std::lock_guard lock(reported_->mu);
      if (!reported_->paths.insert(info().path).second) return;
    }
    char first[32];
    std::snprintf(first, sizeof first, "%.3f", first_s_);
    warn_(info().path + ": " + std::to_string(n) +
          " sample(s) not finite or over 1000 x full scale, read as silence (the first by " + first + " s)");
  }
  const AudioInfo& info() const override { return inner_->info(); }
  Result<size_t> read(float* out, size_t max_frames) override { return note(inner_->read(out, max_frames)); }
  Result<size_t> read_interleaved(float* out, size_t max_frames) override {
    return note(inner_->read_interleaved(out, max_frames));
  }
  Status seek(int64_t frame) override { return inner_->seek(frame); }
  int64_t position_frames() const override { return inner_->position_frames(); }
  int64_t repaired_samples() const override { return inner_->repaired_samples(); }

 private:
  Result<size_t> note(Result<size_t> r) {
    if (first_s_ < 0 && inner_->repaired_samples() > 0)
      first_s_ = static_cast<double>(inner_->position_frames()) / inner_->info().native_rate_hz;
    return r;
  }
  SourcePtr inner_;
  std::function<void(std::string_view)> warn_;
  std::shared_ptr<Reported> reported_;
  double first_s_ = -1;  // the end of the read that found the first
};

}  // namespace

SourceOpener reporting_opener(SourceOpener inner, std::function<void(std::string_view)> warn) {
  auto reported = std::make_shared<Reported>();
  return [inner = std::move(inner), warn = std::move(warn), reported](const std::string& path,
                                                                      ChannelChoice choice) -> Result<SourcePtr> {
    auto src = inner(path, choice);
    if (!src) return src;
    return SourcePtr(std::make_unique<ReportingSource>(std::move(src.value()), warn, reported));
  };
}

}  // namespace godwit
