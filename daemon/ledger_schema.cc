#include "daemon/ledger_schema.h"

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
    absl::Status st = db.Exec(absl::StrCat("BEGIN IMMEDIATE;", kMigrations[v],
                                           "PRAGMA user_version = ", v + 1,
                                           ";COMMIT"));
    if (!st.ok()) {
      db.Exec("ROLLBACK").IgnoreError();
      return absl::Status(st.code(), absl::StrCat("migrating ledger to schema ",
                                                  v + 1, ": ", st.message()));
    }
  }
  return absl::OkStatus();
}

}  // namespace plumbline::daemon
