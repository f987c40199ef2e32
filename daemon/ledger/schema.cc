#include "daemon/ledger/schema.h"

#include <iterator>

#include "absl/strings/str_cat.h"

namespace plumbline::daemon {
namespace {

// kMigrations[i] takes the schema from version i to i + 1. Append only:
// never edit a migration that has shipped.
constexpr const char* kMigrations[] = {
    // 0 -> 1: scores and outcomes.
    "CREATE TABLE scores("
    "  id INTEGER PRIMARY KEY,"
    "  record_id TEXT NOT NULL,"
    "  set_name TEXT NOT NULL,"
    "  set_version TEXT NOT NULL,"
    "  role TEXT NOT NULL,"
    "  scored_at_us INTEGER NOT NULL,"
    "  log_odds REAL NOT NULL,"
    "  probability REAL NOT NULL,"
    "  features TEXT NOT NULL);"
    "CREATE INDEX scores_by_record ON scores(record_id);"
    "CREATE INDEX scores_by_set_time ON scores(set_name, scored_at_us);"
    "CREATE TABLE outcomes("
    "  record_id TEXT PRIMARY KEY,"
    "  label INTEGER NOT NULL CHECK (label IN (0, 1)),"
    "  observed_at_us INTEGER NOT NULL,"
    "  reported_at_us INTEGER NOT NULL);"
    "CREATE INDEX outcomes_by_time ON outcomes(observed_at_us);",
    // 1 -> 2, for ingest speed (measured with tests/bench/ledger_bench):
    // a score refers to its (set name, version, role) by an integer into
    // score_sets instead of repeating the three strings, and outcomes is a
    // WITHOUT ROWID table clustered on record_id (one b-tree per outcome
    // instead of a rowid table plus the index of its TEXT PRIMARY KEY). The
    // view ledger_scores shows scores as version 1 stored them.
    "CREATE TABLE score_sets("
    "  id INTEGER PRIMARY KEY,"
    "  set_name TEXT NOT NULL,"
    "  set_version TEXT NOT NULL,"
    "  role TEXT NOT NULL,"
    "  UNIQUE (set_name, set_version, role));"
    "INSERT INTO score_sets(set_name, set_version, role)"
    "  SELECT set_name, set_version, role FROM scores"
    "  GROUP BY set_name, set_version, role ORDER BY MIN(id);"
    "CREATE TABLE scores_v2("
    "  id INTEGER PRIMARY KEY,"
    "  record_id TEXT NOT NULL,"
    "  set_id INTEGER NOT NULL,"
    "  scored_at_us INTEGER NOT NULL,"
    "  log_odds REAL NOT NULL,"
    "  probability REAL NOT NULL,"
    "  features TEXT NOT NULL);"
    "INSERT INTO scores_v2(id, record_id, set_id, scored_at_us, log_odds,"
    "                      probability, features)"
    "  SELECT s.id, s.record_id, ss.id, s.scored_at_us, s.log_odds,"
    "         s.probability, s.features"
    "  FROM scores s JOIN score_sets ss ON ss.set_name = s.set_name"
    "    AND ss.set_version = s.set_version AND ss.role = s.role"
    "  ORDER BY s.id;"
    "DROP TABLE scores;"
    "ALTER TABLE scores_v2 RENAME TO scores;"
    "CREATE INDEX scores_by_record ON scores(record_id);"
    "CREATE INDEX scores_by_set_time ON scores(set_id, scored_at_us);"
    "CREATE VIEW ledger_scores AS"
    "  SELECT s.id, s.record_id, ss.set_name, ss.set_version, ss.role,"
    "         s.scored_at_us, s.log_odds, s.probability, s.features"
    "  FROM scores s JOIN score_sets ss ON ss.id = s.set_id;"
    "CREATE TABLE outcomes_v2("
    "  record_id TEXT PRIMARY KEY,"
    "  label INTEGER NOT NULL CHECK (label IN (0, 1)),"
    "  observed_at_us INTEGER NOT NULL,"
    "  reported_at_us INTEGER NOT NULL) WITHOUT ROWID;"
    "INSERT INTO outcomes_v2(record_id, label, observed_at_us, reported_at_us)"
    "  SELECT record_id, label, observed_at_us, reported_at_us FROM outcomes;"
    "DROP TABLE outcomes;"
    "ALTER TABLE outcomes_v2 RENAME TO outcomes;"
    "CREATE INDEX outcomes_by_time ON outcomes(observed_at_us);",
    // 2 -> 3: the life of coefficient sets (daemon/version_store.h): every
    // version with its state and document, the order of activations (for
    // rollback) and the audit history. Retention never deletes from these.
    "CREATE TABLE set_versions("
    "  set_name TEXT NOT NULL,"
    "  version TEXT NOT NULL,"
    "  state TEXT NOT NULL"
    "    CHECK (state IN ('active', 'candidate', 'shadow', 'retired')),"
    "  created_at_us INTEGER NOT NULL,"
    "  created_by TEXT NOT NULL,"
    "  reason TEXT NOT NULL,"
    "  comparison TEXT NOT NULL,"
    "  source TEXT NOT NULL,"
    "  document TEXT NOT NULL,"
    "  PRIMARY KEY (set_name, version)) WITHOUT ROWID;"
    "CREATE UNIQUE INDEX one_active_version ON set_versions(set_name)"
    "  WHERE state = 'active';"
    "CREATE TABLE set_activations("
    "  seq INTEGER PRIMARY KEY,"
    "  set_name TEXT NOT NULL,"
    "  version TEXT NOT NULL,"
    "  at_us INTEGER NOT NULL);"
    "CREATE TABLE audit("
    "  id INTEGER PRIMARY KEY,"
    "  at_us INTEGER NOT NULL,"
    "  set_name TEXT NOT NULL,"
    "  version TEXT NOT NULL,"
    "  action TEXT NOT NULL,"
    "  actor TEXT NOT NULL,"
    "  detail TEXT NOT NULL);"
    "CREATE INDEX audit_by_set ON audit(set_name, id);",
    // 3 -> 4, for ingest speed: no index scores_by_set_time. Every score
    // paid for it (0.65 us of the writer's 3.45 us per row, measured with
    // tests/bench/ledger_bench's rows) and its readers do without it:
    // ForEachScore walks scores newest id first and stops at its limit, and
    // retention by age deletes the oldest ids up to the first score within
    // the age (scored_at_us grows with id).
    "DROP INDEX scores_by_set_time;",
    // 4 -> 5, record identity: a record id names one record of a set. A
    // set name gets a small integer (set_names); an active-role score
    // carries its set's in primary_set (shadow scores: NULL), and the
    // unique index on (record_id, primary_set) admits one such score per
    // set and id (NULLs never collide, so a record's shadow scores share
    // its id). Of the repeats earlier schemas let in, the first active
    // score of each (record id, set) becomes the primary one; the others
    // stay, with primary_set NULL, and no outcome labels them.
    "CREATE TABLE set_names("
    "  id INTEGER PRIMARY KEY,"
    "  name TEXT NOT NULL UNIQUE);"
    "INSERT INTO set_names(name)"
    "  SELECT set_name FROM score_sets GROUP BY set_name ORDER BY MIN(id);"
    "ALTER TABLE scores ADD COLUMN primary_set INTEGER;"
    "UPDATE scores SET primary_set ="
    "  (SELECT n.id FROM score_sets ss JOIN set_names n ON n.name = ss.set_name"
    "   WHERE ss.id = scores.set_id)"
    "  WHERE id IN (SELECT MIN(s.id) FROM scores s"
    "               JOIN score_sets ss ON ss.id = s.set_id"
    "               WHERE ss.role = 'active'"
    "               GROUP BY s.record_id, ss.set_name);"
    "DROP INDEX scores_by_record;"
    "CREATE UNIQUE INDEX scores_by_record ON scores(record_id, primary_set);",
    // 5 -> 6: the model-health history (daemon/history/history_store.h):
    // the figures of each set version's windows as the monitor evaluated
    // them, one row per window at most every pages.history_interval, kept
    // for pages.history_retention (the page's "last days" charts).
    "CREATE TABLE IF NOT EXISTS health_history("
    "  id INTEGER PRIMARY KEY,"
    "  at_us INTEGER NOT NULL,"
    "  set_name TEXT NOT NULL,"
    "  version TEXT NOT NULL,"
    "  window_name TEXT NOT NULL,"
    "  state TEXT NOT NULL,"
    "  labelled INTEGER NOT NULL,"
    "  scored INTEGER NOT NULL,"
    "  figures TEXT NOT NULL);"
    "CREATE INDEX IF NOT EXISTS health_history_by_set"
    "  ON health_history(set_name, at_us);",
    // 6 -> 7, compact rows: a score's features are packed in the order of
    // the version that scored it (daemon/scoring/packed_row.h: a BLOB
    // starting with byte 0x01, one to three bytes for most values) instead
    // of a JSON object (~24 bytes a value); score_sets.layout holds, once
    // per (set, version, role), the names and levels that order means
    // (plumbline.v1.RowLayout as JSON). Rows written before keep their
    // JSON, and readers take both. `plumbctl record` shows a stored row's
    // features by name.
    "ALTER TABLE score_sets ADD COLUMN layout TEXT;"
    "DROP VIEW ledger_scores;"
    "CREATE VIEW ledger_scores AS"
    "  SELECT s.id, s.record_id, ss.set_name, ss.set_version, ss.role,"
    "         s.scored_at_us, s.log_odds, s.probability, s.features,"
    "         ss.layout"
    "  FROM scores s JOIN score_sets ss ON ss.id = s.set_id;",
    // 7 -> 8, restarts from snapshots (daemon/health/snapshot_store.h):
    // outcomes.seq numbers new outcomes in the order the writer committed
    // them (rows written before keep NULL and are never in a snapshot's
    // tail), so a snapshot of the monitor's windows can say "every outcome
    // up to seq N"; scores already have their increasing id. One snapshot
    // of each monitored version's window state, replaced at each tick.
    "ALTER TABLE outcomes ADD COLUMN seq INTEGER;"
    "CREATE INDEX outcomes_by_seq ON outcomes(seq) WHERE seq IS NOT NULL;"
    "CREATE TABLE health_snapshots("
    "  id INTEGER PRIMARY KEY,"
    "  set_name TEXT NOT NULL,"
    "  version TEXT NOT NULL,"
    "  taken_at_us INTEGER NOT NULL,"
    "  score_mark INTEGER NOT NULL,"
    "  score_mark_record TEXT NOT NULL,"
    "  outcome_mark INTEGER NOT NULL,"
    "  outcome_mark_record TEXT NOT NULL,"
    "  fingerprint TEXT NOT NULL,"
    "  state BLOB NOT NULL,"
    "  UNIQUE (set_name, version));",
};

}  // namespace

int LatestLedgerSchemaVersion() {
  return static_cast<int>(std::size(kMigrations));
}

absl::Status MigrateLedger(SqliteDb& db) {
  auto version = db.QueryInt64("PRAGMA user_version");
  if (!version.ok()) return version.status();
  const int latest = LatestLedgerSchemaVersion();
  if (*version > latest) {
    return absl::FailedPreconditionError(absl::StrCat(
        "ledger ", db.path(), " has schema version ", *version,
        ", newer than this plumbd understands (", latest,
        "); run a newer plumbd or point --ledger at another file"));
  }
  for (int v = static_cast<int>(*version); v < latest; ++v) {
    absl::Status st =
        db.Exec(absl::StrCat("BEGIN IMMEDIATE;", kMigrations[v],
                             "PRAGMA user_version = ", v + 1, ";COMMIT"));
    if (!st.ok()) {
      db.Exec("ROLLBACK").IgnoreError();
      return absl::Status(st.code(), absl::StrCat("migrating ledger to schema ",
                                                  v + 1, ": ", st.message()));
    }
  }
  return absl::OkStatus();
}

}  // namespace plumbline::daemon
