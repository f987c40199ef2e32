// File: daemon/pg/pg_ledger.h
//
// The PostgreSQL backend of the ledger (daemon/ledger/ledger.h): the rows of
// every plumbd replica that shares one PostgreSQL database, with the same
// guarantees as the SQLite file, checked by the same contract tests
// (tests/daemon/ledger/contract.h).
//
//   LedgerOptions o;
//   o.path = "postgresql://plumbline@db.depot.internal:5432/plumbline";
//   ASSIGN_OR_RETURN(std::unique_ptr<Ledger> ledger, PgLedger::Open(o));
//
// How it keeps the contract across replicas:
// - Writes: one writer thread per process with a bounded queue and group
//   commit, as the SQLite ledger: a group is one transaction that COPYs its
//   scores and outcomes; a caller is answered after COMMIT returned (the
//   server's synchronous_commit decides what COMMIT means: on by default,
//   the commit is flushed to the server's WAL). Record-id uniqueness lives
//   in the server (score_records, outcome_records), so it holds across
//   replicas; the writer checks a group's ids first and reports repeats and
//   conflicts as the SQLite ledger does.
// - Order: every group's transaction first takes the transaction-level
//   advisory lock kPgCommitOrderLockKey and holds it to its COMMIT, so the
//   fleet draws score ids and outcome seqs in commit order. LedgerMarks
//   then mean across replicas what they mean in one file: every row up to
//   the marks is committed and visible, none after them is. The price: the
//   replicas' transactions take turns (each still carries a whole group).
// - The committed-rows feed: a follower thread reads the fleet's rows after
//   its marks, in id and seq order, and gives them to the rows observer;
//   every replica's monitor therefore holds the whole fleet's records. It
//   wakes on a NOTIFY that each group's transaction sends at COMMIT, and
//   every kPgFollowInterval without one (a lost notification only delays).
//   Unlike the SQLite ledger, the observer sees a group after its callers
//   were answered (the time of one notification round trip later);
//   Flush() still waits until the feed has passed everything this process
//   committed. The follower stands still while no rows observer is set, so
//   Marks() does not move either: a monitor that rebuilds its windows up to
//   Marks() and then sets the observer misses no other replica's rows.
// - Partitions: scores and outcomes are partitioned by day
//   (daemon/pg/pg_schema.h). The writer makes sure the days a group needs
//   exist before it writes, and prepares the coming days on each retention
//   pass; retention by age drops whole past days. Retention by row count is
//   not offered (InvalidArgument at Open): it would delete rows one by one.
//
// Thread-safe: all public methods may be called from any thread.
#ifndef PLUMBLINE_DAEMON_PG_PG_LEDGER_H_
#define PLUMBLINE_DAEMON_PG_PG_LEDGER_H_

#include <cstdint>
#include <memory>

#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"
#include "absl/time/time.h"
#include "daemon/ledger/ledger.h"

namespace plumbline::daemon {

// The lock every group's transaction holds from its first row to COMMIT:
// "plumbord" in ASCII.
inline constexpr int64_t kPgCommitOrderLockKey = 0x706c756d626f7264;
// The channel each group's transaction notifies at COMMIT.
inline constexpr char kPgLedgerChannel[] = "plumbline_ledger_rows";
// How long the follower waits for a notification before it looks anyway.
inline constexpr absl::Duration kPgFollowInterval = absl::Seconds(1);
// The longest Flush() waits for the feed to pass this process's commits
// (DeadlineExceeded after it).
inline constexpr absl::Duration kPgFlushFeedWait = absl::Seconds(10);

// True when `where` (LedgerOptions::path, plumbd's --ledger) names a
// PostgreSQL database (a postgresql:// or postgres:// URI) rather than an
// SQLite file.
bool IsPgLedgerUri(absl::string_view where);

class PgLedger {
 public:
  // Connects to options.path (a libpq URI; the password from PGPASSFILE or
  // ~/.pgpass, never in the URI), migrates the schema (under its lock, see
  // pg_schema.h), prepares today's and the next days' partitions and starts
  // the writer and the follower; Marks() starts at the ledger's end at
  // Open, and the rows observer is given what is committed after it.
  // InvalidArgument: not a PostgreSQL URI, a URI with a password,
  // retention_rows set, env set. FailedPrecondition: the database's schema
  // is newer than this build. Unavailable: no connection.
  static absl::StatusOr<std::unique_ptr<Ledger>> Open(LedgerOptions options);
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_PG_PG_LEDGER_H_
