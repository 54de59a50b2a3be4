#include "sqlite_db.h"

#include <sqlite3.h>

#include <filesystem>

namespace godwit {

SqliteStatement& SqliteStatement::operator=(SqliteStatement&& o) noexcept {
  if (this != &o) {
    if (st_) sqlite3_finalize(st_);
    st_ = o.st_;
    db_ = o.db_;
    o.st_ = nullptr;
  }
  return *this;
}

SqliteStatement::~SqliteStatement() {
  if (st_) sqlite3_finalize(st_);
}

SqliteStatement& SqliteStatement::bind(int i, double v) {
  sqlite3_bind_double(st_, i, v);
  return *this;
}
SqliteStatement& SqliteStatement::bind(int i, int64_t v) {
  sqlite3_bind_int64(st_, i, v);
  return *this;
}
SqliteStatement& SqliteStatement::bind(int i, std::string_view v) {
  sqlite3_bind_text(st_, i, v.data(), static_cast<int>(v.size()), SQLITE_TRANSIENT);
  return *this;
}
SqliteStatement& SqliteStatement::bind(int i, const std::optional<double>& v) {
  return v ? bind(i, *v) : bind_null(i);
}
SqliteStatement& SqliteStatement::bind_null(int i) {
  sqlite3_bind_null(st_, i);
  return *this;
}

Result<bool> SqliteStatement::step() {
  const int rc = sqlite3_step(st_);
  if (rc == SQLITE_ROW) return true;
  if (rc == SQLITE_DONE) return false;
  return Error{ErrorCode::io, std::string("store: ") + sqlite3_errmsg(db_), sqlite3_db_filename(db_, "main"), std::nullopt};
}

Status SqliteStatement::run() {
  for (;;) {
    auto r = step();
    if (!r) {
      sqlite3_reset(st_);
      return r.error();
    }
    if (!r.value()) break;
  }
  sqlite3_reset(st_);
  return ok_status();
}

void SqliteStatement::reset() {
  sqlite3_reset(st_);
  sqlite3_clear_bindings(st_);
}

bool SqliteStatement::is_null(int col) const { return sqlite3_column_type(st_, col) == SQLITE_NULL; }
double SqliteStatement::real(int col) const { return sqlite3_column_double(st_, col); }
int64_t SqliteStatement::integer(int col) const { return sqlite3_column_int64(st_, col); }
std::string SqliteStatement::text(int col) const {
  const auto* p = sqlite3_column_text(st_, col);
  return p ? std::string(reinterpret_cast<const char*>(p), static_cast<size_t>(sqlite3_column_bytes(st_, col)))
           : std::string();
}
std::optional<double> SqliteStatement::optional_real(int col) const {
  if (is_null(col)) return std::nullopt;
  return real(col);
}

Result<std::unique_ptr<SqliteDb>> SqliteDb::open(const std::string& path, bool create, int busy_timeout_ms) {
  if (!create && !std::filesystem::exists(path))
    return Error{ErrorCode::not_found, "no store of record here (run a reconcile with --state-dir first)", path,
                 std::nullopt};
  sqlite3* db = nullptr;
  const int flags = SQLITE_OPEN_READWRITE | (create ? SQLITE_OPEN_CREATE : 0) | SQLITE_OPEN_NOMUTEX;
  const int rc = sqlite3_open_v2(path.c_str(), &db, flags, nullptr);
  if (rc != SQLITE_OK) {
    std::string msg = db ? sqlite3_errmsg(db) : sqlite3_errstr(rc);
    sqlite3_close(db);
    return Error{ErrorCode::io, "cannot open the store: " + msg, path, std::nullopt};
  }
  sqlite3_busy_timeout(db, busy_timeout_ms);
  sqlite3_extended_result_codes(db, 1);
  return std::unique_ptr<SqliteDb>(new SqliteDb(db, path));
}

SqliteDb::~SqliteDb() { sqlite3_close_v2(db_); }

Error SqliteDb::error(const std::string& what) const {
  return Error{ErrorCode::io, what + ": " + sqlite3_errmsg(db_), path_, std::nullopt};
}

Status SqliteDb::exec(const std::string& sql) {
  char* msg = nullptr;
  if (sqlite3_exec(db_, sql.c_str(), nullptr, nullptr, &msg) != SQLITE_OK) {
    Error e{ErrorCode::io, std::string("store: ") + (msg ? msg : sqlite3_errmsg(db_)), path_, std::nullopt};
    sqlite3_free(msg);
    return e;
  }
  return ok_status();
}

Result<SqliteStatement> SqliteDb::prepare(const std::string& sql) {
  sqlite3_stmt* st = nullptr;
  if (sqlite3_prepare_v2(db_, sql.c_str(), static_cast<int>(sql.size()), &st, nullptr) != SQLITE_OK)
    return error("store: cannot prepare a statement");
  return SqliteStatement(st, db_);
}

int64_t SqliteDb::last_insert_id() const { return sqlite3_last_insert_rowid(db_); }
int SqliteDb::changes() const { return sqlite3_changes(db_); }

Result<int64_t> SqliteDb::scalar(const std::string& sql) {
  auto st = prepare(sql);
  if (!st) return st.error();
  auto row = st.value().step();
  if (!row) return row.error();
  if (!row.value()) return Error{ErrorCode::internal, "store: no row from " + sql, path_, std::nullopt};
  return st.value().integer(0);
}

Result<std::unique_ptr<SqliteTransaction>> SqliteTransaction::begin(SqliteDb& db) {
  if (auto st = db.exec("BEGIN IMMEDIATE"); !st) return st.error();
  return std::unique_ptr<SqliteTransaction>(new SqliteTransaction(db));
}

SqliteTransaction::~SqliteTransaction() {
  if (!done_) (void)db_.exec("ROLLBACK");
}

Status SqliteTransaction::commit() {
  auto st = db_.exec("COMMIT");
  if (st) done_ = true;
  return st;
}

}  // namespace godwit
