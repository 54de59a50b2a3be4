#include "kept_excerpts.h"

#include <sys/stat.h>

#include <fstream>
#include <sstream>

#include "atomic_file.h"

namespace godwit {
namespace fs = std::filesystem;
namespace {

// [size, mtime_ns] of a file; null when it cannot be examined.
nlohmann::json stamp(const std::string& path) {
  struct stat sb {};
  if (::stat(path.c_str(), &sb) != 0) return nullptr;
  return {static_cast<int64_t>(sb.st_size),
          static_cast<int64_t>(sb.st_mtim.tv_sec) * 1000000000 + static_cast<int64_t>(sb.st_mtim.tv_nsec)};
}

nlohmann::json ref_to_json(const ExcerptRef& r) {
  return {{"from_s", r.from_s},
          {"duration_s", r.duration_s},
          {"rate_hz", r.rate_hz},
          {"bytes", r.bytes},
          {"envelope", {{"step_s", r.envelope.step_s}, {"dbfs", r.envelope.dbfs}}}};
}

std::optional<ExcerptRef> ref_from_json(const nlohmann::json& j) {
  try {
    ExcerptRef r;
    r.from_s = j.at("from_s").get<double>();
    r.duration_s = j.at("duration_s").get<double>();
    r.rate_hz = j.at("rate_hz").get<double>();
    r.bytes = j.at("bytes").get<size_t>();
    r.envelope.step_s = j.at("envelope").at("step_s").get<double>();
    r.envelope.dbfs = j.at("envelope").at("dbfs").get<std::vector<float>>();
    return r;
  } catch (const nlohmann::json::exception&) {
    return std::nullopt;
  }
}

}  // namespace

KeptExcerpts::KeptExcerpts(fs::path manifest, fs::path target, fs::path fresh)
    : manifest_(std::move(manifest)), target_(std::move(target)), fresh_(std::move(fresh)) {
  std::error_code ec;
  if (fs::is_directory(target_, ec)) {
    std::ifstream in(manifest_);
    std::stringstream text;
    text << in.rdbuf();
    auto j = nlohmann::json::parse(text.str(), nullptr, false);
    if (j.is_object() && j.contains("excerpts") && j["excerpts"].is_object()) old_ = std::move(j["excerpts"]);
  }
  fs::remove(manifest_, ec);
}

std::optional<ExcerptRef> KeptExcerpts::take(const std::string& name, const ExcerptOrigin& origin) {
  // The files as they are before the excerpt is cut (or taken): what the
  // next manifest says it was made from.
  nlohmann::json now = nlohmann::json::object();
  for (const auto& f : origin.files) {
    now[f] = stamp(f);
    if (now[f].is_null()) return std::nullopt;
  }
  stamps_[name] = now;
  if (!old_.is_object() || !old_.contains(name)) return std::nullopt;
  const nlohmann::json& e = old_[name];
  if (!e.is_object() || e.value("key", "") != origin.key || e.value("files", nlohmann::json()) != now)
    return std::nullopt;
  auto ref = e.contains("ref") ? ref_from_json(e["ref"]) : std::nullopt;
  std::error_code ec;
  const fs::path from = target_ / name;
  if (!ref || !fs::is_regular_file(fs::symlink_status(from, ec)) || fs::file_size(from, ec) != ref->bytes || ec)
    return std::nullopt;
  fs::create_hard_link(from, fresh_ / name, ec);
  if (ec) {
    ec.clear();
    fs::copy_file(from, fresh_ / name, fs::copy_options::overwrite_existing, ec);
    if (ec) return std::nullopt;
  }
  return ref;
}

Status KeptExcerpts::write(const Listening& made) const {
  nlohmann::json excerpts = nlohmann::json::object();
  auto add = [&](const ExcerptRef& r) {
    const std::string name = fs::path(r.file).filename().string();
    auto o = made.origins.find(name);
    auto files = stamps_.find(name);
    if (o == made.origins.end() || files == stamps_.end()) return;
    excerpts[name] = {{"key", o->second.key}, {"files", files->second}, {"ref", ref_to_json(r)}};
  };
  for (const auto& [i, r] : made.airings) add(r);
  for (const auto& [spot, r] : made.masters) add(r);
  return write_file_atomically(manifest_.string(), nlohmann::json{{"excerpts", excerpts}}.dump() + "\n");
}

}  // namespace godwit
