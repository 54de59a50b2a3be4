#include "proof_files.h"

#include <cstdio>
#include <filesystem>

#include "atomic_file.h"
#include "json_text.h"
#include "proof_page.h"

namespace godwit {
namespace {

std::string csv(const std::string& s) {
  if (s.find_first_of(",\"\r\n") == std::string::npos) return s;
  std::string o = "\"";
  for (char ch : s) o += ch == '"' ? std::string("\"\"") : std::string(1, ch);
  return o + "\"";
}

std::string field(const nlohmann::json& j, const char* key, const char* f = nullptr) {
  if (!j.is_object()) return "";
  auto it = j.find(key);
  if (it == j.end() || it->is_null()) return "";
  if (it->is_string()) return csv(it->get<std::string>());
  if (it->is_boolean()) return it->get<bool>() ? "yes" : "no";
  if (it->is_number() && f) {
    char b[64];
    std::snprintf(b, sizeof b, f, it->get<double>() + 0.0);
    return b;
  }
  return csv(it->dump());
}

const nlohmann::json& sub(const nlohmann::json& j, const char* key) {
  static const nlohmann::json empty;
  if (!j.is_object()) return empty;
  auto it = j.find(key);
  return it == j.end() ? empty : *it;
}


}  // namespace

std::string proof_to_csv(const nlohmann::json& doc) {
  std::string o =
      "station,day,slot,spot,title,planned,status,owed,aired,detected_spot,deviation_s,score,coverage,spot_lufs,"
      "programme_lufs,recording,recording_sha256,offset_s\r\n";
  for (const auto& st : sub(doc, "stations")) {
    const std::string name = field(st, "station");
    for (const auto& p : sub(st, "placements")) {
      o += name + "," + field(p, "day") + "," + field(p, "slot") + "," + field(p, "spot") + "," + field(p, "title") + "," +
           field(p, "planned") + "," + field(p, "status") + "," + field(p, "owed") + ",";
      const auto& a = sub(p, "airing");
      if (a.is_object()) {
        o += field(a, "aired") + "," + field(p, "detected_spot") + "," + field(p, "deviation_s", "%.3f") + "," +
             field(a, "score", "%.4f") + "," + field(a, "coverage", "%.3f") + "," +
             field(sub(a, "loudness"), "spot_lufs", "%.1f") + "," + field(sub(a, "loudness"), "programme_lufs", "%.1f") +
             "," + field(a, "recording") + "," + field(a, "recording_sha256") + "," + field(a, "offset_s", "%.6f");
      } else {
        o += ",,,,,,,,,";
      }
      o += "\r\n";
    }
    for (const auto& a : sub(st, "unscheduled")) {
      const std::string aired = a.is_object() ? a.value("aired", "") : "";
      o += name + "," + aired.substr(0, 10) + ",," + field(a, "spot") + ",,,unscheduled,no,";
      o += field(a, "aired") + "," + field(a, "spot") + ",," + field(a, "score", "%.4f") + "," +
           field(a, "coverage", "%.3f") + "," + field(sub(a, "loudness"), "spot_lufs", "%.1f") + "," +
           field(sub(a, "loudness"), "programme_lufs", "%.1f") + "," + field(a, "recording") + "," +
           field(a, "recording_sha256") + "," + field(a, "offset_s", "%.6f") + "\r\n";
    }
  }
  return o;
}

Result<std::vector<std::string>> write_proof_files(const nlohmann::json& proof, const std::string& out_dir) {
  namespace fs = std::filesystem;
  std::error_code ec;
  fs::create_directories(out_dir, ec);
  if (ec) return Error{ErrorCode::io, "cannot create the output folder: " + ec.message(), out_dir, std::nullopt};
  std::vector<std::string> written;
  const std::pair<const char*, std::string> files[] = {{"proof.json", json_text(proof, 2) + "\n"},
                                                       {"proof.csv", proof_to_csv(proof)},
                                                       {"proof.html", proof_to_html(proof)}};
  for (const auto& [name, text] : files) {
    const std::string path = (fs::path(out_dir) / name).string();
    if (auto st = write_file_atomically(path, text); !st) return st.error();
    written.push_back(path);
  }
  return written;
}

}  // namespace godwit
