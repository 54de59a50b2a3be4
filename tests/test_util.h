// Helpers shared by the tests: temporary folders, in-memory openers,
// reference scripts in Python (Debian's numpy, scipy, OpenCV).
#pragma once

#include <filesystem>
#include <map>
#include <string>

#include "godwit/audio/audio_source.h"
#include "godwit/search/job.h"
#include "godwit/search/template_bank.h"
#include "godwit/core/types.h"

namespace godwit::test {

// A fresh folder under the system temp dir, removed on destruction.
class TempDir {
 public:
  TempDir();
  ~TempDir();
  const std::filesystem::path& path() const { return path_; }
  std::string file(const std::string& name) const { return (path_ / name).string(); }

 private:
  std::filesystem::path path_;
};

// In-memory "files": path -> mono samples at a rate. The opener serves them
// as MemorySource; unknown paths are not_found.
struct MemoryFiles {
  struct Entry {
    Samples mono;
    double rate_hz;
    int64_t fail_at_frame = -1;
  };
  std::map<std::string, Entry> files;
  SourceOpener opener() const;
};

// A source that does not state its length (as a stream of an unknown
// length does), so that a plan decodes it to count its frames.
class Unsized : public AudioSource {
 public:
  explicit Unsized(SourcePtr s) : s_(std::move(s)), info_(s_->info()) { info_.native_frames.reset(); }
  const AudioInfo& info() const override { return info_; }
  Result<size_t> read(float* out, size_t n) override { return s_->read(out, n); }
  Status seek(int64_t frame) override { return s_->seek(frame); }
  int64_t position_frames() const override { return s_->position_frames(); }

 private:
  SourcePtr s_;
  AudioInfo info_;
};

// Locate options for in-memory files: estimate planner, FFTs up to 2^18
// (fast to plan, enough for masters of a minute).
LocateOptions fast_locate_options(const MemoryFiles& files);

// A bank of in-memory templates (analysis rate), estimate planner.
std::shared_ptr<const TemplateBank> make_bank(const std::vector<Samples>& templates, size_t fixed_fft_size = 0);

// Direct (double precision) Pearson trace, for cross-checks inside C++.
Samples direct_trace(const Samples& tmpl, const Samples& x);

void write_f32(const std::string& path, const Samples& x);
Samples read_f32(const std::string& path);
// Runs `script` (tests/ref/...) with Debian's python3; returns its exit code.
int run_reference(const std::string& script, const std::string& args);

}  // namespace godwit::test
