#include "spot_metadata.h"

#include <filesystem>
#include <fstream>
#include <nlohmann/json.hpp>

namespace godwit {

std::map<std::string, SpotMeta> load_spot_metadata(const std::vector<std::string>& masters,
                                                   std::vector<std::string>& problems) {
  namespace fs = std::filesystem;
  std::map<std::string, SpotMeta> out;
  for (const auto& m : masters) {
    const fs::path p(m);
    const fs::path side = p.parent_path() / (p.stem().string() + ".meta.json");
    std::error_code ec;
    const auto st = fs::status(side, ec);
    if (ec || !fs::exists(st)) continue;
    if (!fs::is_regular_file(st)) {  // a FIFO would block the reader until someone writes to it
      problems.push_back(side.string() + ": ignored: not a regular file");
      continue;
    }
    std::ifstream in(side);
    if (!in) continue;
    try {
      const auto j = nlohmann::json::parse(in);
      if (!j.is_object()) throw std::runtime_error("not a JSON object");
      SpotMeta meta;
      meta.title = j.value("title", "");
      meta.advertiser = j.value("advertiser", "");
      meta.family = j.value("family", "");
      out[p.stem().string()] = meta;
    } catch (const std::exception& e) {
      problems.push_back(side.string() + ": ignored: " + e.what());
    }
  }
  return out;
}

}  // namespace godwit
