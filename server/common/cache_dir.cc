#include "cache_dir.h"

#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <sstream>

#include "atomic_file.h"

namespace godwit {
namespace {

bool read_text(const std::string& path, std::string& out) {
  std::ifstream in(path, std::ios::binary);
  if (!in) return false;
  std::ostringstream ss;
  ss << in.rdbuf();
  out = ss.str();
  return true;
}

}  // namespace

std::string default_cache_dir() {
  if (const char* x = std::getenv("XDG_CACHE_HOME"); x && *x) return std::string(x) + "/godwit";
  if (const char* h = std::getenv("HOME"); h && *h) return std::string(h) + "/.cache/godwit";
  return {};
}

FftCache::FftCache(std::string dir, std::function<void(std::string_view)> warn)
    : dir_(std::move(dir)), warn_(std::move(warn)) {}

FftCostTable FftCache::load() {
  if (dir_.empty()) return {};
  std::string text;
  if (read_text(dir_ + "/fftw-wisdom-float", text) && !import_fft_wisdom(text))
    warn_("ignoring unreadable FFTW wisdom in " + dir_);
  if (read_text(dir_ + "/fft-costs.json", text)) return cost_table_from_json(text);
  return {};
}

void FftCache::save(const FftCostTable& costs) {
  if (dir_.empty()) return;
  std::error_code ec;
  std::filesystem::create_directories(dir_, ec);
  if (ec) {
    warn_("cannot create cache folder " + dir_ + ": " + ec.message());
    return;
  }
  for (const auto& [name, text] : {std::pair{std::string("fftw-wisdom-float"), export_fft_wisdom()},
                                   std::pair{std::string("fft-costs.json"), cost_table_to_json(costs)}}) {
    if (auto st = write_file_atomically(dir_ + "/" + name, text); !st) warn_(st.error().describe());
  }
}

}  // namespace godwit
