// File: daemon/pg/pg_connection.h
//
// One connection to a PostgreSQL server, RAII over libpq's C API: the
// plumbing a PostgreSQL ledger (the SQLite ledger's counterpart,
// daemon/ledger/sqlite_db.h) stands on. Statements without parameters
// (Exec), statements with text parameters and text results (Query), bulk
// loads with COPY ... FROM STDIN (CopyIn), LISTEN / NOTIFY between plumbd
// replicas, and session-level advisory locks (one replica does a job at a
// time). Errors are values: absl::Status carrying PostgreSQL's SQLSTATE and
// message, with codes mapped as the comment at PgErrorCode says.
//
//   auto db = PgConnection::Connect("postgresql://plumbline@127.0.0.1:5432/"
//                                   "plumbline");
//   absl::StatusOr<PgResult> r = (*db)->Query(
//       "SELECT depot FROM parcels WHERE parcel_id = $1", {"P-1001"});
//
// Passwords never travel in the URI: libpq finds them in the file named by
// PGPASSFILE (or ~/.pgpass), and Connect refuses a URI that carries one, so
// a URI can be logged and shown in messages as it is.
//
// Why libpq and no C++ wrapper (libpqxx): libpq is the client library the
// PostgreSQL project itself keeps, packaged by Debian (libpq-dev); this file
// wraps the few calls the ledger needs the way sqlite_db.h wraps SQLite's,
// with absl::Status instead of exceptions, and one dependency fewer.
//
// Thread-safety: a connection is used by one thread at a time (libpq's
// rule); different connections may be used from different threads at once.
#ifndef PLUMBLINE_DAEMON_PG_PG_CONNECTION_H_
#define PLUMBLINE_DAEMON_PG_PG_CONNECTION_H_

#include <cstdint>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "absl/status/status.h"
#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"
#include "absl/time/time.h"
#include "absl/types/span.h"

// libpq's connection (libpq-fe.h: typedef struct pg_conn PGconn), declared
// here so that users of this header need no libpq headers.
struct pg_conn;

namespace plumbline::daemon {

// One value as PostgreSQL's text format has it; nullopt is SQL NULL.
using PgValue = std::optional<std::string>;
using PgRow = std::vector<PgValue>;

// The result of a Query: rows x columns of text values (NULL as nullopt),
// the column names, and the rows the command affected (PQcmdTuples: rows
// inserted, updated, deleted or selected; 0 for commands without a count).
struct PgResult {
  std::vector<std::string> columns;
  std::vector<PgRow> rows;
  int64_t affected_rows = 0;
};

// One notification received on a channel this connection listens on.
struct PgNotification {
  std::string channel;
  std::string payload;
  int sender_pid = 0;  // the server process of the connection that sent it
};

// The absl code for SQLSTATE `sqlstate` (five characters; "" when the
// error came from libpq itself). The mapping:
//   23505 unique_violation                       -> AlreadyExists
//   other class 23 (foreign key, not null, check) -> FailedPrecondition
//   40001 serialization_failure, 40P01 deadlock,
//   55P03 lock_not_available                     -> Aborted (redo the
//                                                   transaction)
//   class 08 (connection exception), 57P01-57P03
//   (administrator shutdown, crash shutdown,
//   cannot connect now)                          -> Unavailable
//   57014 query_canceled (also statement_timeout) -> Cancelled
//   42501 insufficient_privilege                 -> PermissionDenied
//   other class 42 (syntax error, undefined table,
//   column or function, ...), class 22 (data
//   exception: a value that does not parse, out
//   of range), 0A000 feature_not_supported       -> InvalidArgument: the
//       statement or a value given to it is wrong, and sending it again
//       will fail again; the caller (our own SQL, or a caller's value) is
//       to blame, not the server. Nothing here is Internal but what no row
//       above names.
//   class 53 (disk full, out of memory, too many
//   connections)                                 -> ResourceExhausted
//   class 25 (invalid transaction state, e.g. a
//   statement in an aborted transaction)         -> FailedPrecondition
//   anything else                                -> Internal
absl::StatusCode PgErrorCode(absl::string_view sqlstate);

// The text-format COPY line for `row`, with its newline: values separated
// by tabs, NULL as \N, and backslash, tab, newline and carriage return
// escaped. REQUIRES: no value contains a NUL byte (CopyIn checks).
std::string PgCopyLine(const PgRow& row);

class PgConnection {
 public:
  // Connects to the libpq connection URI `uri` (postgresql://USER@HOST:PORT/
  // DATABASE?PARAMS), waiting at most 10 s unless the URI's connect_timeout
  // says otherwise; client_encoding is UTF8. The password comes from
  // PGPASSFILE or ~/.pgpass (libpq's own lookup).
  // InvalidArgument: not a postgresql:// URI, a URI libpq cannot parse, or
  // one that carries a password (user:secret@ or password=): the secret is
  // never repeated in the message. Unauthenticated: the server wants a
  // password and none was found. Unavailable: no connection (the message
  // names host and port and says why).
  static absl::StatusOr<std::unique_ptr<PgConnection>> Connect(
      absl::string_view uri);

  ~PgConnection();
  PgConnection(const PgConnection&) = delete;
  PgConnection& operator=(const PgConnection&) = delete;

  // "HOST:PORT/DATABASE as USER", for messages.
  const std::string& description() const { return description_; }
  // The server process serving this connection (pg_backend_pid()).
  int backend_pid() const;

  // Runs `sql`: one or more statements without parameters (BEGIN, DDL,
  // COMMIT, ...). Result rows, if any, are discarded.
  absl::Status Exec(absl::string_view sql);

  // Runs one statement with text parameters $1..$n (nullopt: NULL) and
  // returns its rows as text. A parameter with a NUL byte is
  // InvalidArgument (PostgreSQL text cannot hold one).
  absl::StatusOr<PgResult> Query(absl::string_view sql,
                                 absl::Span<const PgValue> params = {});

  // Runs `copy_sql`, a COPY ... FROM STDIN in text format (the default:
  // no FORMAT csv / binary), sending `rows`; returns the rows copied. Every
  // row must have as many values as the COPY has columns: a row that does
  // not, or a value with a NUL byte, aborts the whole COPY (nothing is
  // copied) with InvalidArgument naming the row (1-based) and, for a NUL,
  // the column.
  absl::StatusOr<int64_t> CopyIn(absl::string_view copy_sql,
                                 absl::Span<const PgRow> rows);

  // LISTEN on `channel` (any non-empty name; quoted, so case matters).
  absl::Status Listen(absl::string_view channel);
  // NOTIFY `channel` with `payload` (pg_notify: less than 8000 bytes).
  // Delivered when the sender's transaction commits (at once outside one).
  absl::Status Notify(absl::string_view channel, absl::string_view payload);
  // The notifications received so far, waiting up to `timeout` for the
  // first when there are none yet; empty when the time passed without one.
  // Unavailable if the connection is lost while waiting.
  absl::StatusOr<std::vector<PgNotification>> WaitForNotification(
      absl::Duration timeout);

  // Session-level advisory locks (pg_try_advisory_lock): true when this
  // connection now holds `key`, false when another session holds it. A lock
  // is held until AdvisoryUnlock or until the connection closes; taken
  // twice by one connection, it needs two unlocks.
  absl::StatusOr<bool> TryAdvisoryLock(int64_t key);
  // FailedPrecondition when this connection does not hold `key`.
  absl::Status AdvisoryUnlock(int64_t key);

 private:
  // SELECT function($1::bigint) for a function of one bigint that returns
  // a boolean; Internal when it returns no single value.
  absl::StatusOr<bool> QueryBool(absl::string_view function, int64_t key);

  PgConnection(pg_conn* conn, std::string description)
      : conn_(conn), description_(std::move(description)) {}

  pg_conn* conn_;
  std::string description_;
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_PG_PG_CONNECTION_H_
