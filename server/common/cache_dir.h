// The on-disk cache of FFTW wisdom and measured FFT costs, so that plans
// and the FFT size choice are made once per machine, not once per run.
// Default folder: $XDG_CACHE_HOME/godwit, else $HOME/.cache/godwit.
// A cache that cannot be read or written is skipped with a warning: it
// only costs planning time.
#pragma once

#include <functional>
#include <string>
#include <string_view>

#include "godwit/search/fft_size_chooser.h"

namespace godwit {

std::string default_cache_dir();

class FftCache {
 public:
  // Empty `dir`: no cache.
  FftCache(std::string dir, std::function<void(std::string_view)> warn);
  // Loads wisdom into FFTW and returns the cost table (possibly empty).
  FftCostTable load();
  // Saves FFTW's current wisdom and `costs`.
  void save(const FftCostTable& costs);

 private:
  std::string dir_;
  std::function<void(std::string_view)> warn_;
};

}  // namespace godwit
