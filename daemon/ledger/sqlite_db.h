// File: daemon/ledger/sqlite_db.h
//
// Thin RAII wrappers over SQLite's C API for the ledger: a connection that
// closes itself, prepared statements that finalize themselves, and errors as
// absl::Status naming the database file and the statement. Only the calls
// the ledger needs are wrapped.
//
//   auto db = SqliteDb::Open("var/ledger.db");
//   auto st = (*db)->Prepare("INSERT INTO t(a) VALUES (?1)");
//   st->BindText(1, "x"); absl::Status s = st->Run();
//
// The first Open turns off SQLite's memory statistics for the process (a
// global mutex per allocation that nothing here reads).
//
// Not thread-safe: one connection per thread (the ledger's writer has its
// own, readers open theirs).
#ifndef PLUMBLINE_DAEMON_LEDGER_SQLITE_DB_H_
#define PLUMBLINE_DAEMON_LEDGER_SQLITE_DB_H_

#include <sqlite3.h>

#include <cstdint>
#include <memory>
#include <string>

#include "absl/status/status.h"
#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"
#include "daemon/ledger/env.h"

namespace plumbline::daemon {

class SqliteDb;

// A prepared statement. Must not outlive the SqliteDb that made it.
class SqliteStatement {
 public:
  ~SqliteStatement();
  SqliteStatement(const SqliteStatement&) = delete;
  SqliteStatement& operator=(const SqliteStatement&) = delete;

  // Parameters are 1-based, as in SQLite. Text is copied.
  void BindText(int i, absl::string_view v);
  // Text is not copied: `v` must stay valid and unchanged until the
  // statement has run and been reset (the ledger's hot path binds rows it
  // holds until their commit).
  void BindTextNoCopy(int i, absl::string_view v);
  // As BindTextNoCopy, bound as a BLOB (bytes that are not text).
  void BindBlobNoCopy(int i, absl::string_view v);
  void BindInt64(int i, int64_t v);
  void BindDouble(int i, double v);
  void BindNull(int i);

  // Steps once: true when a row is ready, false when done.
  absl::StatusOr<bool> Step();
  // Steps until done (for statements without result rows), then resets.
  absl::Status Run();
  // Resets for new bindings (bindings are cleared too).
  void Reset();

  int64_t ColumnInt64(int i) const;
  double ColumnDouble(int i) const;
  std::string ColumnText(int i) const;
  bool ColumnIsNull(int i) const;

 private:
  friend class SqliteDb;
  SqliteStatement(SqliteDb* db, sqlite3_stmt* stmt) : db_(db), stmt_(stmt) {}
  SqliteDb* db_;
  sqlite3_stmt* stmt_;
};

class SqliteDb {
 public:
  // Opens (creating if needed) the database at `path`, with a busy timeout so
  // concurrent readers wait for the writer instead of failing at once.
  // Every file access goes through `env` (daemon/ledger/env.h; null: the
  // default env), which must outlive the connection.
  static absl::StatusOr<std::unique_ptr<SqliteDb>> Open(
      const std::string& path, LedgerEnv* env = nullptr);
  ~SqliteDb();
  SqliteDb(const SqliteDb&) = delete;
  SqliteDb& operator=(const SqliteDb&) = delete;

  const std::string& path() const { return path_; }
  sqlite3* handle() { return db_; }

  // Runs one or more statements without results.
  absl::Status Exec(absl::string_view sql);
  absl::StatusOr<std::unique_ptr<SqliteStatement>> Prepare(
      absl::string_view sql);
  // Rows changed by the last INSERT, UPDATE or DELETE on this connection.
  int64_t Changes() const;
  // Single integer result of `sql` (e.g. "PRAGMA user_version").
  absl::StatusOr<int64_t> QueryInt64(absl::string_view sql);

  // Status for SQLite result code `rc` while doing `what`.
  absl::Status Error(int rc, absl::string_view what) const;

 private:
  SqliteDb(std::string path, sqlite3* db) : path_(std::move(path)), db_(db) {}
  std::string path_;
  sqlite3* db_;
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_LEDGER_SQLITE_DB_H_
