// SqliteDb and SqliteStatement: a thin RAII layer over libsqlite3 for the
// store of record, with errors as values (ErrorCode::io, message from
// SQLite) instead of result codes.
//
// Thread contract: one SqliteDb (and its statements) per thread at a time;
// the caller serializes use (RecordStore holds a mutex per connection).
#pragma once

#include <cstdint>
#include <memory>
#include <optional>
#include <string>
#include <string_view>

#include "godwit/core/error.h"

struct sqlite3;
struct sqlite3_stmt;

namespace godwit {

class SqliteStatement {
 public:
  SqliteStatement() = default;
  SqliteStatement(SqliteStatement&& o) noexcept : st_(o.st_), db_(o.db_) { o.st_ = nullptr; }
  SqliteStatement& operator=(SqliteStatement&& o) noexcept;
  SqliteStatement(const SqliteStatement&) = delete;
  SqliteStatement& operator=(const SqliteStatement&) = delete;
  ~SqliteStatement();

  // Parameters are 1-based, as in SQL's ?1, ?2 ...
  SqliteStatement& bind(int i, double v);
  SqliteStatement& bind(int i, int64_t v);
  SqliteStatement& bind(int i, int v) { return bind(i, static_cast<int64_t>(v)); }
  SqliteStatement& bind(int i, std::string_view v);
  SqliteStatement& bind(int i, const std::string& v) { return bind(i, std::string_view(v)); }
  SqliteStatement& bind(int i, const char* v) { return bind(i, std::string_view(v)); }
  SqliteStatement& bind(int i, const std::optional<double>& v);
  SqliteStatement& bind_null(int i);

  // One step: true when a row is ready, false when done; an error otherwise.
  Result<bool> step();
  // Steps to the end (for statements that return no rows).
  Status run();
  void reset();  // ready to run again; bindings cleared

  bool is_null(int col) const;
  double real(int col) const;
  int64_t integer(int col) const;
  std::string text(int col) const;
  std::optional<double> optional_real(int col) const;

 private:
  friend class SqliteDb;
  SqliteStatement(sqlite3_stmt* st, sqlite3* db) : st_(st), db_(db) {}
  sqlite3_stmt* st_ = nullptr;
  sqlite3* db_ = nullptr;
};

class SqliteDb {
 public:
  // Opens (creating when `create`) the database at `path`, with a busy
  // timeout so that a second process waits for a writer instead of failing.
  // Errors: io (with SQLite's message), not_found (!create and no file).
  static Result<std::unique_ptr<SqliteDb>> open(const std::string& path, bool create, int busy_timeout_ms = 10000);
  SqliteDb(const SqliteDb&) = delete;
  SqliteDb& operator=(const SqliteDb&) = delete;
  ~SqliteDb();

  // Runs one or more statements with no results.
  Status exec(const std::string& sql);
  Result<SqliteStatement> prepare(const std::string& sql);
  int64_t last_insert_id() const;
  int changes() const;
  // One integer of a one-row query (PRAGMA user_version, count(*)).
  Result<int64_t> scalar(const std::string& sql);
  const std::string& path() const { return path_; }
  Error error(const std::string& what) const;  // io, "what: SQLite's message"

 private:
  SqliteDb(sqlite3* db, std::string path) : db_(db), path_(std::move(path)) {}
  sqlite3* db_ = nullptr;
  std::string path_;
};

// BEGIN IMMEDIATE on construction (the write lock taken at once, so two
// writers queue on the busy timeout instead of deadlocking), ROLLBACK on
// destruction unless commit() succeeded: a failure or an exception between
// the two leaves nothing behind.
class SqliteTransaction {
 public:
  static Result<std::unique_ptr<SqliteTransaction>> begin(SqliteDb& db);
  SqliteTransaction(const SqliteTransaction&) = delete;
  SqliteTransaction& operator=(const SqliteTransaction&) = delete;
  ~SqliteTransaction();
  Status commit();

 private:
  explicit SqliteTransaction(SqliteDb& db) : db_(db) {}
  SqliteDb& db_;
  bool done_ = false;
};

}  // namespace godwit
