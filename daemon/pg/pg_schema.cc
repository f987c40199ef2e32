#include "daemon/pg/pg_schema.h"

#include <iterator>
#include <optional>
#include <string>
#include <vector>

#include "absl/strings/match.h"
#include "absl/strings/numbers.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_format.h"
#include "absl/strings/string_view.h"
#include "absl/time/civil_time.h"

namespace plumbline::daemon {
namespace {

// kPgSteps[i] takes the schema from version i to i + 1. Append only: never
// edit or reorder a step that has shipped; a change is a new step at the
// end. Steps use plain CREATE (no IF NOT EXISTS): a step that ran twice
// would fail loudly instead of hiding a broken lock.
constexpr const char* kPgSteps[] = {
    // 0 -> 1: the ledger's scores and outcomes, as the SQLite ledger keeps
    // them at its version 8 (daemon/ledger/schema.cc), shared by replicas.
    //
    // set_names gives a set name the integer a primary score carries in
    // primary_set (the SQLite ledger's set_names). score_sets: one row per
    // (set, version, role) with the row layout its packed features mean.
    "CREATE TABLE set_names("
    "  id bigint GENERATED ALWAYS AS IDENTITY PRIMARY KEY,"
    "  name text NOT NULL UNIQUE);"
    "CREATE TABLE score_sets("
    "  id bigint GENERATED ALWAYS AS IDENTITY PRIMARY KEY,"
    "  set_name text NOT NULL,"
    "  set_version text NOT NULL,"
    "  role text NOT NULL CHECK (role IN ('active', 'shadow')),"
    "  layout text,"
    "  UNIQUE (set_name, set_version, role));"
    // Score ids come from one sequence, so they increase across replicas
    // (identity columns on partitioned tables need PostgreSQL 17). A
    // unique index on a partitioned table must include the partition key:
    // the primary key is (scored_at, id), and uniqueness of a record's
    // score lives in score_records.
    "CREATE SEQUENCE scores_id_seq AS bigint;"
    "CREATE TABLE scores("
    "  id bigint NOT NULL DEFAULT nextval('scores_id_seq'),"
    "  record_id text NOT NULL,"
    "  set_id bigint NOT NULL REFERENCES score_sets(id),"
    "  scored_at timestamptz NOT NULL,"
    "  log_odds double precision NOT NULL,"
    "  probability double precision NOT NULL,"
    "  features bytea NOT NULL,"
    "  primary_set bigint REFERENCES set_names(id),"
    "  PRIMARY KEY (scored_at, id))"
    "  PARTITION BY RANGE (scored_at);"
    "ALTER SEQUENCE scores_id_seq OWNED BY scores.id;"
    // Not partitioned: the one place that enforces one active score per
    // (record id, set) across all replicas and partitions, and where an
    // outcome finds its score (score_id and scored_at prune to one
    // partition) without scanning every partition.
    "CREATE TABLE score_records("
    "  record_id text NOT NULL,"
    "  primary_set bigint NOT NULL REFERENCES set_names(id),"
    "  score_id bigint NOT NULL,"
    "  scored_at timestamptz NOT NULL,"
    "  PRIMARY KEY (record_id, primary_set));"
    "CREATE INDEX score_records_by_time ON score_records(scored_at);"
    // seq numbers outcomes in commit order across replicas (snapshots of
    // the monitor's windows say "every outcome up to seq N").
    "CREATE SEQUENCE outcomes_seq_seq AS bigint;"
    "CREATE TABLE outcomes("
    "  record_id text NOT NULL,"
    "  label smallint NOT NULL CHECK (label IN (0, 1)),"
    "  observed_at timestamptz NOT NULL,"
    "  reported_at timestamptz NOT NULL,"
    "  seq bigint NOT NULL DEFAULT nextval('outcomes_seq_seq'),"
    "  PRIMARY KEY (observed_at, seq))"
    "  PARTITION BY RANGE (observed_at);"
    "ALTER SEQUENCE outcomes_seq_seq OWNED BY outcomes.seq;"
    // Not partitioned, for the same reason as score_records: one outcome
    // per record id, whatever day it was observed.
    "CREATE TABLE outcome_records("
    "  record_id text PRIMARY KEY,"
    "  seq bigint NOT NULL,"
    "  observed_at timestamptz NOT NULL);"
    "CREATE INDEX outcome_records_by_time ON outcome_records(observed_at);",
    // 1 -> 2: what the ledger backend (daemon/pg/pg_ledger.h) reads by, and
    // outcomes partitioned by the ledger's own clock. Partitioned by
    // observed_at (a time the caller gives), a caller could make the
    // ledger create a partition for every day it names, decades apart;
    // reported_at is when the ledger wrote the row, so outcomes, like
    // scores, land in today's partition. No build wrote outcomes at
    // version 1; the tables are recreated, and refused if they hold rows.
    "DO $$ BEGIN"
    "  IF EXISTS (SELECT 1 FROM outcomes) OR"
    "     EXISTS (SELECT 1 FROM outcome_records) THEN"
    "    RAISE EXCEPTION 'outcomes hold rows; version 2 repartitions them"
    " and needs them empty';"
    "  END IF;"
    "END $$;"
    "DROP TABLE outcomes;"
    "DROP TABLE outcome_records;"
    "CREATE SEQUENCE outcomes_seq_seq AS bigint;"
    "CREATE TABLE outcomes("
    "  record_id text NOT NULL,"
    "  label smallint NOT NULL CHECK (label IN (0, 1)),"
    "  observed_at timestamptz NOT NULL,"
    "  reported_at timestamptz NOT NULL,"
    "  seq bigint NOT NULL DEFAULT nextval('outcomes_seq_seq'),"
    "  PRIMARY KEY (reported_at, seq))"
    "  PARTITION BY RANGE (reported_at);"
    "ALTER SEQUENCE outcomes_seq_seq OWNED BY outcomes.seq;"
    "CREATE TABLE outcome_records("
    "  record_id text PRIMARY KEY,"
    "  seq bigint NOT NULL,"
    "  reported_at timestamptz NOT NULL);"
    "CREATE INDEX outcome_records_by_time ON outcome_records(reported_at);"
    // The feed reads rows after a mark by id and seq; outcomes find their
    // scores by record id; windows read outcomes by observed time.
    "CREATE INDEX scores_by_id ON scores(id);"
    "CREATE INDEX scores_by_record ON scores(record_id);"
    "CREATE INDEX outcomes_by_seq ON outcomes(seq);"
    "CREATE INDEX outcomes_by_observed ON outcomes(observed_at);",
    // 2 -> 3: no foreign keys on the growing tables. Each was a trigger per
    // row (the reference COPY of tests/bench/ledger_bench took 100,000
    // scores at 28,000 rows/s with them); the ledger writes only set ids it
    // has just read from score_sets and set_names, whose rows are never
    // deleted.
    "ALTER TABLE scores DROP CONSTRAINT scores_set_id_fkey,"
    "  DROP CONSTRAINT scores_primary_set_fkey;"
    "ALTER TABLE score_records DROP CONSTRAINT score_records_primary_set_fkey;",
    // 3 -> 4: the version registry (daemon/pg/pg_version_store.h), as the
    // SQLite ledger keeps it since its version 3: every version of every
    // set with its state and document, the order of activations, and the
    // audit. Times are microseconds since the epoch (bigint), as there:
    // exact both ways, including the far past absl::Time maps to int64's
    // minimum. Names compare byte by byte (COLLATE "C"), as SQLite's do, so
    // both backends list versions in the same order.
    "CREATE TABLE set_versions("
    "  set_name text COLLATE \"C\" NOT NULL,"
    "  version text COLLATE \"C\" NOT NULL,"
    "  state text NOT NULL"
    "    CHECK (state IN ('active', 'candidate', 'shadow', 'retired')),"
    "  created_at_us bigint NOT NULL,"
    "  created_by text NOT NULL,"
    "  reason text NOT NULL,"
    "  comparison text NOT NULL,"
    "  source text NOT NULL,"
    "  document text NOT NULL,"
    "  PRIMARY KEY (set_name, version));"
    // One active version per set, whichever replica writes it.
    "CREATE UNIQUE INDEX one_active_version ON set_versions(set_name)"
    "  WHERE state = 'active';"
    "CREATE TABLE set_activations("
    "  seq bigint GENERATED ALWAYS AS IDENTITY PRIMARY KEY,"
    "  set_name text COLLATE \"C\" NOT NULL,"
    "  version text COLLATE \"C\" NOT NULL,"
    "  at_us bigint NOT NULL);"
    "CREATE INDEX set_activations_by_set ON set_activations(set_name, seq);"
    "CREATE TABLE audit("
    "  id bigint GENERATED ALWAYS AS IDENTITY PRIMARY KEY,"
    "  at_us bigint NOT NULL,"
    "  set_name text COLLATE \"C\" NOT NULL,"
    "  version text COLLATE \"C\" NOT NULL,"
    "  action text NOT NULL,"
    "  actor text NOT NULL,"
    "  detail text NOT NULL);"
    "CREATE INDEX audit_by_set ON audit(set_name, id);",
};

// The version table: one row, enforced by a boolean primary key that can
// only be true. Created (with version 0) under the lock, so replicas
// starting on an empty database do not race to create it.
constexpr char kVersionTable[] =
    "CREATE TABLE IF NOT EXISTS plumbline_schema("
    "  one boolean PRIMARY KEY DEFAULT true CHECK (one),"
    "  version integer NOT NULL);"
    "INSERT INTO plumbline_schema(version) SELECT 0"
    "  WHERE NOT EXISTS (SELECT 1 FROM plumbline_schema)";

// The tables EnsurePartitions and DropPartitionsBefore look after: the
// partitioned table, its partition key, and the unpartitioned table whose
// rows point into it (same time column).
struct Partitioned {
  const char* table;
  const char* key;
  const char* records;
};
constexpr Partitioned kPartitioned[] = {
    {"scores", "scored_at", "score_records"},
    {"outcomes", "reported_at", "outcome_records"},
};

absl::Status Prefixed(const absl::Status& st, absl::string_view what) {
  return absl::Status(st.code(), absl::StrCat(what, ": ", st.message()));
}

// Runs `body` in a transaction that first takes the advisory lock `key`
// (released at COMMIT or ROLLBACK). On any error the transaction is rolled
// back and the error returned, prefixed with `what`.
template <typename Body>
absl::Status InLockedTransaction(PgConnection& db, int64_t key,
                                 absl::string_view what, Body body) {
  if (absl::Status st = db.Exec("BEGIN"); !st.ok()) return Prefixed(st, what);
  absl::Status st =
      db.Query("SELECT pg_advisory_xact_lock($1::bigint)", {absl::StrCat(key)})
          .status();
  if (st.ok()) st = body();
  if (st.ok()) st = db.Exec("COMMIT");
  if (!st.ok()) {
    db.Exec("ROLLBACK").IgnoreError();
    return Prefixed(st, what);
  }
  return absl::OkStatus();
}

absl::StatusOr<int64_t> SingleInt(PgConnection& db, absl::string_view sql,
                                  absl::Span<const PgValue> params = {}) {
  absl::StatusOr<PgResult> r = db.Query(sql, params);
  if (!r.ok()) return r.status();
  int64_t v = 0;
  if (r->rows.size() != 1 || r->rows[0].empty() || !r->rows[0][0] ||
      !absl::SimpleAtoi(*r->rows[0][0], &v)) {
    return absl::InternalError(
        absl::StrCat("expected one integer from `", sql, "`"));
  }
  return v;
}

absl::Time DayStart(absl::CivilDay day) {
  return absl::FromCivil(day, absl::UTCTimeZone());
}

// '2026-12-03 00:00:00+00': a timestamptz literal of `day`'s start in UTC,
// read the same whatever the session's TimeZone.
std::string DayLiteral(absl::CivilDay day) {
  return absl::StrFormat("'%04d-%02d-%02d 00:00:00+00'", day.year(),
                         day.month(), day.day());
}

std::string PartitionName(absl::string_view table, absl::CivilDay day) {
  return absl::StrFormat("%s_p%04d%02d%02d", table, day.year(), day.month(),
                         day.day());
}

// The day of a partition named PartitionName(table, day), or nullopt for
// any other name.
std::optional<absl::CivilDay> PartitionDay(absl::string_view table,
                                           absl::string_view name) {
  const std::string prefix = absl::StrCat(table, "_p");
  if (name.size() != prefix.size() + 8 || !absl::StartsWith(name, prefix)) {
    return std::nullopt;
  }
  absl::string_view digits = name.substr(prefix.size());
  int y = 0, m = 0, d = 0;
  if (!absl::SimpleAtoi(digits.substr(0, 4), &y) ||
      !absl::SimpleAtoi(digits.substr(4, 2), &m) ||
      !absl::SimpleAtoi(digits.substr(6, 2), &d)) {
    return std::nullopt;
  }
  for (char c : digits) {
    if (c < '0' || c > '9') return std::nullopt;
  }
  const absl::CivilDay day(y, m, d);
  // CivilDay normalises 20261340 to a real day: such a name is not ours.
  if (day.year() != y || day.month() != m || day.day() != d) {
    return std::nullopt;
  }
  return day;
}

bool Finite(absl::Time t) {
  return t != absl::InfiniteFuture() && t != absl::InfinitePast();
}

}  // namespace

int LatestPgLedgerSchemaVersion() {
  return static_cast<int>(std::size(kPgSteps));
}

absl::StatusOr<int> MigratePgLedger(PgConnection& db) {
  const int latest = LatestPgLedgerSchemaVersion();
  // One transaction per step; each reads the version afresh after taking
  // the lock (READ COMMITTED: the statement after the lock sees what the
  // previous holder committed), so a replica that waited finds the step
  // done and moves on.
  for (;;) {
    int64_t version = -1;
    bool done = false;
    absl::Status st = InLockedTransaction(
        db, kPgSchemaLockKey, "migrating PostgreSQL ledger", [&] {
          if (absl::Status s = db.Exec(kVersionTable); !s.ok()) return s;
          absl::StatusOr<int64_t> rows =
              SingleInt(db, "SELECT count(*) FROM plumbline_schema");
          if (!rows.ok()) return rows.status();
          if (*rows != 1) {
            return absl::FailedPreconditionError(absl::StrCat(
                "plumbline_schema holds ", *rows,
                " rows instead of one; the database was changed by hand"));
          }
          absl::StatusOr<int64_t> v =
              SingleInt(db, "SELECT version FROM plumbline_schema");
          if (!v.ok()) return v.status();
          version = *v;
          if (version > latest) {
            return absl::FailedPreconditionError(absl::StrCat(
                "database ", db.description(), " has ledger schema version ",
                version, ", newer than this plumbd knows (", latest,
                "); run a newer plumbd against it"));
          }
          if (version < 0) {
            return absl::FailedPreconditionError(absl::StrCat(
                "plumbline_schema holds version ", version, ", below 0"));
          }
          if (version == latest) {
            done = true;
            return absl::OkStatus();
          }
          absl::Status s = db.Exec(kPgSteps[version]);
          if (!s.ok()) {
            return Prefixed(
                s, absl::StrCat("step to schema version ", version + 1));
          }
          return db
              .Query("UPDATE plumbline_schema SET version = $1::integer",
                     {absl::StrCat(version + 1)})
              .status();
        });
    if (!st.ok()) return st;
    if (done) return latest;
  }
}

absl::Status EnsurePartitions(PgConnection& db, absl::Time from,
                              absl::Time to) {
  if (!Finite(from) || !Finite(to)) {
    return absl::InvalidArgumentError(
        "EnsurePartitions: from and to must be finite times");
  }
  const absl::CivilDay first = absl::ToCivilDay(from, absl::UTCTimeZone());
  const absl::CivilDay last = absl::ToCivilDay(to, absl::UTCTimeZone());
  if (last < first) {
    return absl::InvalidArgumentError(
        absl::StrCat("EnsurePartitions: to (", absl::FormatCivilTime(last),
                     ") is before from (", absl::FormatCivilTime(first), ")"));
  }
  const int64_t days = (last - first) + 1;
  if (days > kMaxPartitionDays) {
    return absl::InvalidArgumentError(absl::StrCat(
        "EnsurePartitions: ", absl::FormatCivilTime(first), " to ",
        absl::FormatCivilTime(last), " spans ", days, " days, more than the ",
        kMaxPartitionDays, " allowed in one call"));
  }
  // One short transaction per day: a long span does not hold the lock (or
  // hundreds of table locks) in one transaction, and what was created
  // stays created if a later day fails.
  for (absl::CivilDay day = first; day <= last; ++day) {
    std::string sql;
    for (const Partitioned& p : kPartitioned) {
      absl::StrAppend(&sql, "CREATE TABLE IF NOT EXISTS ",
                      PartitionName(p.table, day), " PARTITION OF ", p.table,
                      " FOR VALUES FROM (", DayLiteral(day), ") TO (",
                      DayLiteral(day + 1), ");");
    }
    absl::Status st = InLockedTransaction(
        db, kPgPartitionLockKey,
        absl::StrCat("creating the partitions of ", absl::FormatCivilTime(day)),
        [&] { return db.Exec(sql); });
    if (!st.ok()) return st;
  }
  return absl::OkStatus();
}

absl::StatusOr<int> DropPartitionsBefore(PgConnection& db, absl::Time cutoff) {
  if (!Finite(cutoff)) {
    return absl::InvalidArgumentError(
        "DropPartitionsBefore: cutoff must be a finite time");
  }
  int dropped = 0;
  for (const Partitioned& p : kPartitioned) {
    absl::StatusOr<PgResult> parts = db.Query(
        "SELECT c.relname FROM pg_inherits i"
        "  JOIN pg_class c ON c.oid = i.inhrelid"
        "  WHERE i.inhparent = $1::regclass ORDER BY c.relname",
        {std::string(p.table)});
    if (!parts.ok()) {
      return Prefixed(parts.status(),
                      absl::StrCat("listing the partitions of ", p.table));
    }
    for (const PgRow& row : parts->rows) {
      if (row.empty() || !row[0]) continue;
      const std::string& name = *row[0];
      std::optional<absl::CivilDay> day = PartitionDay(p.table, name);
      if (!day) continue;  // not a partition EnsurePartitions made
      if (DayStart(*day + 1) > cutoff) continue;
      const std::string start = DayLiteral(*day);
      const std::string end = DayLiteral(*day + 1);
      const std::string cut = absl::FormatTime("'%Y-%m-%d %H:%M:%E6S+00'",
                                               cutoff, absl::UTCTimeZone());
      bool gone = false;
      absl::Status st = InLockedTransaction(
          db, kPgPartitionLockKey, absl::StrCat("dropping partition ", name),
          [&]() -> absl::Status {
            // Another replica may have dropped it while we waited.
            absl::StatusOr<int64_t> exists =
                SingleInt(db,
                          "SELECT count(*) FROM pg_class WHERE oid = "
                          "to_regclass($1)",
                          {name});
            if (!exists.ok()) return exists.status();
            if (*exists == 0) return absl::OkStatus();
            // The name says the day; the bounds must agree (the DELETE
            // below takes the day from the name), and a partition with a
            // row at or after the cutoff is never dropped.
            if (absl::Status s = db.Exec("SET LOCAL TimeZone = 'UTC'");
                !s.ok()) {
              return s;
            }
            absl::StatusOr<PgResult> bound = db.Query(
                "SELECT pg_get_expr(relpartbound, oid) FROM pg_class "
                "WHERE oid = $1::regclass",
                {name});
            if (!bound.ok()) return bound.status();
            const std::string want =
                absl::StrCat("FOR VALUES FROM (", start, ") TO (", end, ")");
            if (bound->rows.size() != 1 || bound->rows[0][0] != want) {
              return absl::FailedPreconditionError(absl::StrCat(
                  name, " has bounds ",
                  bound->rows.size() == 1 ? bound->rows[0][0].value_or("NULL")
                                          : std::string("(none)"),
                  ", not the day its name says (", want, "); not dropped"));
            }
            absl::StatusOr<int64_t> newer =
                SingleInt(db, absl::StrCat("SELECT count(*) FROM ", name,
                                           " WHERE ", p.key, " >= ", cut));
            if (!newer.ok()) return newer.status();
            if (*newer > 0) {
              return absl::FailedPreconditionError(absl::StrCat(
                  name, " holds ", *newer, " rows at or after the cutoff ", cut,
                  "; not dropped"));
            }
            // The record rows of the day go in the same transaction as the
            // partition, so a record never points at a dropped row. A
            // DELETE is fine here where it is not for the partitions: these
            // tables hold a few short keys per row, the time index makes
            // it a range of one day, and they must stay unpartitioned to
            // enforce uniqueness across all days.
            absl::Status s = db.Exec(absl::StrCat(
                "DELETE FROM ", p.records, " WHERE ", p.key, " >= ", start,
                " AND ", p.key, " < ", end, ";DROP TABLE ", name));
            if (!s.ok()) return s;
            gone = true;
            return absl::OkStatus();
          });
      if (!st.ok()) return st;
      if (gone) ++dropped;
    }
  }
  return dropped;
}

}  // namespace plumbline::daemon
