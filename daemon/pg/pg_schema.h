// File: daemon/pg/pg_schema.h
//
// The schema of the PostgreSQL ledger (the counterpart of the SQLite
// ledger's daemon/ledger/schema.h) that several plumbd replicas share:
// versioned migrations applied under an advisory lock so that replicas
// starting at once apply each step exactly once, daily time partitions of
// the two growing tables (scores by scored_at, outcomes by reported_at, the
// ledger's clock), and retention by dropping whole partitions instead of
// DELETE.
//
//   ASSIGN_OR_RETURN(int version, MigratePgLedger(*db));
//   RETURN_IF_ERROR(EnsurePartitions(*db, absl::Now() - absl::Hours(24),
//                                    absl::Now() + absl::Hours(72)));
//   ASSIGN_OR_RETURN(int dropped,
//                    DropPartitionsBefore(*db, absl::Now() - retention));
//
// Tables (version 1): score_sets, set_names, scores (partitioned),
// score_records (one active score per record id and set, across replicas
// and partitions), outcomes (partitioned), outcome_records (one outcome per
// record id). Version 3 adds the version registry that replicas share
// (daemon/pg/pg_version_store.h): set_versions (one active version per
// set), set_activations, audit. There is no default partition: a row whose time
// falls outside every prepared partition fails (SQLSTATE 23514, which the
// connection reports as FailedPrecondition) instead of piling up
// somewhere retention never reaches.
//
// Thread-safety: the functions hold no state of their own; each uses the
// connection it is given, which one thread uses at a time (libpq's rule).
// Different connections, in one process or in several replicas, may call
// them at the same time: the advisory locks below serialise them in the
// server.
#ifndef PLUMBLINE_DAEMON_PG_PG_SCHEMA_H_
#define PLUMBLINE_DAEMON_PG_PG_SCHEMA_H_

#include <cstdint>

#include "absl/status/status.h"
#include "absl/status/statusor.h"
#include "absl/time/time.h"
#include "daemon/pg/pg_connection.h"

namespace plumbline::daemon {

// Transaction-level advisory lock (pg_advisory_xact_lock) each migration
// step's transaction takes first: "plumbsch" in ASCII.
inline constexpr int64_t kPgSchemaLockKey = 0x706c756d62736368;
// Transaction-level advisory lock of partition maintenance (creating and
// dropping partitions): "plumbprt" in ASCII.
inline constexpr int64_t kPgPartitionLockKey = 0x706c756d62707274;

// The most days EnsurePartitions prepares in one call.
inline constexpr int kMaxPartitionDays = 400;

// The schema version this build brings a database to.
int LatestPgLedgerSchemaVersion();

// Brings the database `db` is connected to to LatestPgLedgerSchemaVersion()
// and returns that version. The version lives in the one row of
// plumbline_schema. Each step runs in its own transaction that first takes
// kPgSchemaLockKey, then reads the version and applies the next step only
// if it is still due, so of several replicas migrating at once exactly one
// applies each step and the others wait and then find it applied.
// FailedPrecondition: the database's version is newer than this build
// knows (the message names both; an older plumbd must not run against a
// newer schema), or plumbline_schema does not hold exactly one row. Any
// other error is the failing step's, prefixed with its target version; the
// step's transaction is rolled back and earlier steps stay applied.
absl::StatusOr<int> MigratePgLedger(PgConnection& db);

// Creates, if missing, the daily partitions (UTC days, named
// scores_pYYYYMMDD and outcomes_pYYYYMMDD, each covering [day 00:00 UTC,
// next day 00:00 UTC)) of scores and outcomes for every day from the day
// of `from` to the day of `to`, both included. Safe to repeat and to call
// from several connections at once (kPgPartitionLockKey, one transaction
// per day). InvalidArgument: `from` or `to` infinite, `to` before `from`,
// or more than kMaxPartitionDays days (the message names the span).
// REQUIRES: MigratePgLedger ran (otherwise InvalidArgument naming the
// missing table).
absl::Status EnsurePartitions(PgConnection& db, absl::Time from, absl::Time to);

// Retention: drops every daily partition of scores and of outcomes (named
// as EnsurePartitions names them; other tables are left alone) whose day
// ends at or before `cutoff`, together with the score_records /
// outcome_records rows of that day, and returns how many partitions it
// dropped. A partition so named whose bounds are not its name's day, or
// that nonetheless holds a row at or after `cutoff`, is never dropped
// (FailedPrecondition naming it and its bounds, after the ones dropped
// before it). InvalidArgument: `cutoff` infinite.
absl::StatusOr<int> DropPartitionsBefore(PgConnection& db, absl::Time cutoff);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_PG_PG_SCHEMA_H_
