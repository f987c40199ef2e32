#include "daemon/ledger/sqlite_db.h"

#include <cstring>
#include <utility>

#include "absl/strings/str_cat.h"

namespace plumbline::daemon {

SqliteStatement::~SqliteStatement() { sqlite3_finalize(stmt_); }

void SqliteStatement::BindText(int i, absl::string_view v) {
  sqlite3_bind_text(stmt_, i, v.data(), static_cast<int>(v.size()),
                    SQLITE_TRANSIENT);
}
void SqliteStatement::BindTextNoCopy(int i, absl::string_view v) {
  sqlite3_bind_text(stmt_, i, v.data(), static_cast<int>(v.size()),
                    SQLITE_STATIC);
}
void SqliteStatement::BindBlobNoCopy(int i, absl::string_view v) {
  sqlite3_bind_blob(stmt_, i, v.data(), static_cast<int>(v.size()),
                    SQLITE_STATIC);
}
void SqliteStatement::BindInt64(int i, int64_t v) {
  sqlite3_bind_int64(stmt_, i, v);
}
void SqliteStatement::BindDouble(int i, double v) {
  sqlite3_bind_double(stmt_, i, v);
}
void SqliteStatement::BindNull(int i) { sqlite3_bind_null(stmt_, i); }

absl::StatusOr<bool> SqliteStatement::Step() {
  const int rc = sqlite3_step(stmt_);
  if (rc == SQLITE_ROW) return true;
  if (rc == SQLITE_DONE) return false;
  return db_->Error(rc, sqlite3_sql(stmt_));
}

absl::Status SqliteStatement::Run() {
  absl::StatusOr<bool> row;
  do {
    row = Step();
  } while (row.ok() && *row);
  Reset();
  return row.status();
}

void SqliteStatement::Reset() {
  sqlite3_reset(stmt_);
  sqlite3_clear_bindings(stmt_);
}

int64_t SqliteStatement::ColumnInt64(int i) const {
  return sqlite3_column_int64(stmt_, i);
}
double SqliteStatement::ColumnDouble(int i) const {
  return sqlite3_column_double(stmt_, i);
}
std::string SqliteStatement::ColumnText(int i) const {
  const unsigned char* text = sqlite3_column_text(stmt_, i);
  if (text == nullptr) return "";
  return std::string(reinterpret_cast<const char*>(text),
                     static_cast<size_t>(sqlite3_column_bytes(stmt_, i)));
}
bool SqliteStatement::ColumnIsNull(int i) const {
  return sqlite3_column_type(stmt_, i) == SQLITE_NULL;
}

absl::StatusOr<std::unique_ptr<SqliteDb>> SqliteDb::Open(
    const std::string& path, LedgerEnv* env) {
  if (env == nullptr) env = LedgerEnv::Default();
  // SQLite's memory statistics take a global mutex on every allocation; the
  // ledger never reads them, and without them its ingest needs about 15%
  // less CPU per row (tests/bench/ledger_bench). The setting only takes
  // before SQLite initializes, that is before the process's first
  // connection; later calls fail harmlessly and are ignored.
  static const bool memstatus_off [[maybe_unused]] =
      sqlite3_config(SQLITE_CONFIG_MEMSTATUS, 0) == SQLITE_OK;
  sqlite3* db = nullptr;
  const int rc = sqlite3_open_v2(
      path.c_str(), &db,
      SQLITE_OPEN_READWRITE | SQLITE_OPEN_CREATE | SQLITE_OPEN_NOMUTEX,
      env->vfs_name().c_str());
  if (rc != SQLITE_OK) {
    std::string msg = db != nullptr ? sqlite3_errmsg(db) : sqlite3_errstr(rc);
    if (db != nullptr && sqlite3_system_errno(db) != 0) {
      absl::StrAppend(&msg, " [", std::strerror(sqlite3_system_errno(db)), "]");
    }
    sqlite3_close(db);
    return absl::UnavailableError(
        absl::StrCat("ledger ", path, ": cannot open: ", msg));
  }
  sqlite3_busy_timeout(db, 5000);
  sqlite3_extended_result_codes(db, 1);
  return std::unique_ptr<SqliteDb>(new SqliteDb(path, db));
}

SqliteDb::~SqliteDb() { sqlite3_close(db_); }

absl::Status SqliteDb::Exec(absl::string_view sql) {
  char* err = nullptr;
  const std::string text(sql);
  const int rc = sqlite3_exec(db_, text.c_str(), nullptr, nullptr, &err);
  if (rc == SQLITE_OK) return absl::OkStatus();
  sqlite3_free(err);  // the connection's message says the same
  return Error(rc, sql);
}

absl::StatusOr<std::unique_ptr<SqliteStatement>> SqliteDb::Prepare(
    absl::string_view sql) {
  sqlite3_stmt* stmt = nullptr;
  const int rc =
      sqlite3_prepare_v3(db_, sql.data(), static_cast<int>(sql.size()),
                         SQLITE_PREPARE_PERSISTENT, &stmt, nullptr);
  if (rc != SQLITE_OK) return Error(rc, sql);
  return std::unique_ptr<SqliteStatement>(new SqliteStatement(this, stmt));
}

int64_t SqliteDb::Changes() const { return sqlite3_changes64(db_); }

absl::StatusOr<int64_t> SqliteDb::QueryInt64(absl::string_view sql) {
  auto st = Prepare(sql);
  if (!st.ok()) return st.status();
  auto row = (*st)->Step();
  if (!row.ok()) return row.status();
  if (!*row)
    return absl::InternalError(
        absl::StrCat("ledger ", path_, ": no result for ", sql));
  return (*st)->ColumnInt64(0);
}

absl::Status SqliteDb::Error(int rc, absl::string_view what) const {
  // For I/O errors, what the system said (the env's injected errno too).
  std::string system;
  const int primary = rc & 0xff;
  if (primary == SQLITE_IOERR || primary == SQLITE_FULL ||
      primary == SQLITE_CANTOPEN || primary == SQLITE_READONLY) {
    if (const int e = sqlite3_system_errno(db_); e != 0) {
      system = absl::StrCat(" [", std::strerror(e), "]");
    }
  }
  const std::string msg =
      absl::StrCat("ledger ", path_, ": ", sqlite3_errmsg(db_), system,
                   " (while running: ", what.substr(0, 80), ")");
  switch (rc & 0xff) {
    case SQLITE_BUSY:
    case SQLITE_LOCKED:
      return absl::UnavailableError(msg);
    case SQLITE_FULL:
      return absl::ResourceExhaustedError(msg);
    // The disk or the file failed (an I/O error, a file made read-only or
    // removed under us): nothing was written; retry later.
    case SQLITE_IOERR:
    case SQLITE_READONLY:
    case SQLITE_CANTOPEN:
      return absl::UnavailableError(msg);
    case SQLITE_CORRUPT:
    case SQLITE_NOTADB:
      return absl::DataLossError(msg);
    case SQLITE_CONSTRAINT:
      return absl::FailedPreconditionError(msg);
    default:
      return absl::InternalError(msg);
  }
}

}  // namespace plumbline::daemon
