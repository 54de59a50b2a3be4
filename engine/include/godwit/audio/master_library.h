// MasterLibrary: the masters of one job, each decoded once.
//
// Every stage of a job needs the masters: the template bank and the speed
// search at the analysis rate, native-rate refinement and the evidence of a
// detection at a recording's rate (and at the speed it aired), families at
// the analysis rate. Each stage used to open and decode the file itself, up
// to five times per master in a reconcile job. The library decodes a master
// once, to mono (the channel mean) at its native rate, keeps that and its
// analysis-rate version, and gives any other rate by resampling the kept
// native samples. The samples are exactly those of
// decode_all(*opener(path, {}), rate_hz): decode_all decodes the whole file
// and then resamples it whole, which is what the library does in two steps.
//
// Memory: what is kept is bounded by `keep_bytes` (least recently used
// dropped first; dropped masters are decoded again when asked for, and
// counted). 0 keeps nothing beyond the callers' own references: each
// request decodes, as the stages did on their own. A locate job run alone
// (run_locate without a library) keeps nothing, so that its peak memory
// stays that of the bank (the `day` benchmark's 512 MiB target); the jobs
// that go back to the masters after the search (timeline locate,
// reconcile, a queue task) make one with the default.
//
// Failures are not kept: a master that cannot be opened or decoded is
// tried again at the next request, with the opener's error.
//
// Thread contract: safe for concurrent use (a mutex; decoding happens
// under it, resampling to a rate that is not kept outside it).
#pragma once

#include <cstddef>
#include <list>
#include <map>
#include <memory>
#include <mutex>
#include <string>
#include <utility>

#include "godwit/audio/audio_source.h"
#include "godwit/core/error.h"
#include "godwit/core/types.h"

namespace godwit {

struct MasterLibraryStats {
  size_t decodes = 0;    // files opened and decoded whole
  size_t resamples = 0;  // kept native samples resampled to another rate
  size_t hits = 0;       // requests answered from what was kept
};

class MasterLibrary {
 public:
  // Default: 64 MiB, about 11 masters of 30 s at 48 kHz or 65 at 8 kHz.
  // Enough for the masters one stage works on at a time (the speed fits
  // take theirs in batches, the confirmation and the evidence only the
  // detected ones); a larger keep costs memory and saves nothing
  // measurable: on the codec day (codec_day_bench, 1 h x 100 masters at
  // 48 kHz), 256 MiB made `godwit locate` peak at 1 033 MiB and 64 MiB at
  // 743 MiB, `godwit reconcile` 1 022 and 750 MiB, with the same CPU time
  // and byte-identical results (docs/performance.md).
  static constexpr size_t kDefaultKeepBytes = size_t{64} << 20;

  // `opener` opens the masters (always as the channel mean);
  // `analysis_rate_hz` is the rate kept beside the native one.
  MasterLibrary(SourceOpener opener, double analysis_rate_hz, size_t keep_bytes = kDefaultKeepBytes);

  // The master at `rate_hz` (<= 0 or its native rate: as decoded).
  Result<std::shared_ptr<const Samples>> samples(const std::string& path, double rate_hz);
  // At the analysis rate.
  Result<std::shared_ptr<const Samples>> analysis(const std::string& path) { return samples(path, analysis_rate_hz_); }
  // Its native rate (decoding it, when not yet known).
  Result<double> native_rate_hz(const std::string& path);

  double analysis_rate_hz() const { return analysis_rate_hz_; }
  const SourceOpener& opener() const { return opener_; }
  MasterLibraryStats stats() const;
  // How often this master was decoded (0 when never).
  size_t decodes(const std::string& path) const;

  MasterLibrary(const MasterLibrary&) = delete;
  MasterLibrary& operator=(const MasterLibrary&) = delete;

 private:
  using Key = std::pair<std::string, double>;  // path, rate (native: the native rate)
  struct Kept {
    std::shared_ptr<const Samples> samples;
    std::list<Key>::iterator age;  // in lru_
  };
  // Under mu_: the native samples, decoded unless kept.
  Result<std::shared_ptr<const Samples>> native_locked(const std::string& path);
  std::shared_ptr<const Samples> find_locked(const Key& key);
  void keep_locked(const Key& key, std::shared_ptr<const Samples> samples);

  SourceOpener opener_;
  double analysis_rate_hz_;
  size_t keep_bytes_;
  mutable std::mutex mu_;
  std::map<Key, Kept> kept_;                  // GUARDED_BY(mu_)
  std::list<Key> lru_;                        // GUARDED_BY(mu_); most recent first
  size_t kept_bytes_ = 0;                     // GUARDED_BY(mu_)
  std::map<std::string, double> native_rate_; // GUARDED_BY(mu_)
  std::map<std::string, size_t> decodes_;     // GUARDED_BY(mu_)
  MasterLibraryStats stats_;                  // GUARDED_BY(mu_)
};

}  // namespace godwit
