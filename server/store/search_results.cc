// RecordStore's kept search results and file digests (record_store.h).
#include <sys/stat.h>

#include <ctime>

#include "file_digest.h"
#include "record_store.h"

namespace godwit {

std::optional<std::string> RecordStore::stored_result(const std::string& kind, const std::string& key_sha256,
                                                      const std::string& master_sha256,
                                                      const std::string& template_id) {
  std::lock_guard lock(read_mu_);
  auto st = reader_->prepare(
      "SELECT result_json FROM search_results WHERE kind = ?1 AND key_sha256 = ?2 AND master_sha256 = ?3 AND "
      "template_id = ?4");
  if (!st) return std::nullopt;
  st.value().bind(1, kind).bind(2, key_sha256).bind(3, master_sha256).bind(4, template_id);
  auto row = st.value().step();
  if (!row || !row.value()) return std::nullopt;
  return st.value().text(0);
}

Status RecordStore::store_results(const std::vector<StoredResult>& rows) {
  if (rows.empty()) return ok_status();
  std::lock_guard lock(write_mu_);
  auto tx = SqliteTransaction::begin(*writer_);
  if (!tx) return tx.error();
  auto st = writer_->prepare(
      "INSERT OR REPLACE INTO search_results(kind, key_sha256, master_sha256, template_id, result_json, stored_utc) "
      "VALUES(?1, ?2, ?3, ?4, ?5, ?6)");
  if (!st) return st.error();
  auto file = writer_->prepare(
      "INSERT OR IGNORE INTO search_result_files(kind, key_sha256, file_sha256) VALUES(?1, ?2, ?3)");
  if (!file) return file.error();
  const auto now = static_cast<int64_t>(std::time(nullptr));
  for (const auto& r : rows) {
    st.value().bind(1, r.kind).bind(2, r.key_sha256).bind(3, r.master_sha256).bind(4, r.template_id);
    st.value().bind(5, r.result_json).bind(6, now);
    if (auto s = st.value().run(); !s) return s;
    st.value().reset();
    for (const auto& f : r.files) {
      file.value().bind(1, r.kind).bind(2, r.key_sha256).bind(3, f);
      if (auto s = file.value().run(); !s) return s;
      file.value().reset();
    }
  }
  return tx.value()->commit();
}

int64_t RecordStore::stored_results(const std::string& kind) {
  std::lock_guard lock(read_mu_);
  auto st = reader_->prepare("SELECT count(*) FROM search_results WHERE kind = ?1");
  if (!st) return -1;
  st.value().bind(1, kind);
  auto row = st.value().step();
  return row && row.value() ? st.value().integer(0) : -1;
}

Result<std::string> RecordStore::file_digest(const std::string& path) {
  struct stat sb {};
  if (::stat(path.c_str(), &sb) != 0) return file_sha256(path);  // its error
  const auto dev = static_cast<int64_t>(sb.st_dev), ino = static_cast<int64_t>(sb.st_ino);
  const auto size = static_cast<int64_t>(sb.st_size);
  const int64_t mtime_ns = static_cast<int64_t>(sb.st_mtim.tv_sec) * 1000000000 + sb.st_mtim.tv_nsec;
  {
    std::lock_guard lock(read_mu_);
    auto st = reader_->prepare(
        "SELECT sha256 FROM file_digests WHERE device = ?1 AND inode = ?2 AND size_bytes = ?3 AND mtime_ns = ?4");
    if (st) {
      st.value().bind(1, dev).bind(2, ino).bind(3, size).bind(4, mtime_ns);
      auto row = st.value().step();
      if (row && row.value()) return st.value().text(0);
    }
  }
  auto digest = file_sha256(path);
  if (!digest) return digest.error();
  std::lock_guard lock(write_mu_);
  auto st = writer_->prepare(
      "INSERT OR REPLACE INTO file_digests(device, inode, size_bytes, mtime_ns, sha256, path) VALUES(?1, ?2, ?3, ?4, ?5, ?6)");
  if (st) {
    st.value().bind(1, dev).bind(2, ino).bind(3, size).bind(4, mtime_ns).bind(5, digest.value()).bind(6, path);
    (void)st.value().run();  // a digest not kept is computed again next time
  }
  return digest;
}

}  // namespace godwit
