// File: daemon/ledger/schema.h
//
// The ledger's SQL schema and its forward migrations. The schema version is
// SQLite's PRAGMA user_version; migration i takes a ledger from version i to
// i + 1, each in its own transaction, so a ledger written by any earlier
// plumbd opens in a later one. A ledger newer than this build is refused
// rather than written with a schema it does not know.
//
// Tables (version 5):
//   score_sets(id, set_name, set_version, role)   UNIQUE (name, version, role)
//   scores(id, record_id, set_id -> score_sets.id, scored_at_us, log_odds,
//          probability, features)              features: JSON as received
//     index scores_by_record(record_id); ids grow with scored_at_us, so
//     reads by time walk the id order (version 4 dropped the index
//     scores_by_set_time that versions 1-3 kept, for ingest speed)
//   outcomes(record_id PRIMARY KEY, label 0/1, observed_at_us, reported_at_us,
//          seq)  WITHOUT ROWID; index outcomes_by_time(observed_at_us);
//     seq (version 8): commit order of outcomes written since, NULL before;
//     partial index outcomes_by_seq
//   view ledger_scores: scores joined to their set name, version and role
//     (the columns of version 1's scores table), for people reading the file
//   set_versions(set_name, version, state, created_at_us, created_by,
//          reason, comparison, source, document)  PRIMARY KEY (name, version);
//     at most one 'active' version per set (partial unique index)
//   set_activations(seq, set_name, version, at_us)  every activation, in order
//   audit(id, at_us, set_name, version, action, actor, detail)
//   health_history(id, at_us, set_name, version, window_name, state,
//          labelled, scored, figures)     figures: JSON object of the
//     window's defined figures; index (set_name, at_us); version 5
//   health_snapshots(id, set_name, version, taken_at_us, score_mark,
//          score_mark_record, outcome_mark, outcome_mark_record,
//          fingerprint, state)  UNIQUE (set_name, version); version 8: the
//     monitor's window state of each version and the last score id and
//     outcome seq it holds (daemon/health/snapshot_store.h)
// Times are microseconds since the Unix epoch (UTC).
//
// Called by SqliteLedger::Open on the writer connection. Not thread-safe.
#ifndef PLUMBLINE_DAEMON_LEDGER_SCHEMA_H_
#define PLUMBLINE_DAEMON_LEDGER_SCHEMA_H_

#include "absl/status/status.h"
#include "daemon/ledger/sqlite_db.h"

namespace plumbline::daemon {

// The version a fully migrated ledger has.
int LatestLedgerSchemaVersion();

// Brings `db` to LatestLedgerSchemaVersion(). FAILED_PRECONDITION naming both
// versions if the file is newer than this build.
absl::Status MigrateLedger(SqliteDb& db);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_LEDGER_SCHEMA_H_
