// File: daemon/ledger/set_ids.h
//
// The ledger stores the (set name, set version, role) of a score once, in
// the table score_sets, and each score row refers to it by a small integer
// (schema version 2): rows get shorter and the index by set compares
// integers, which makes ingest markedly cheaper (tests/bench/ledger_bench).
// LedgerSetIds hands the writer the id of a score's triple, adding the
// triple to score_sets the first time it is seen, and keeps the ids in
// memory. Consecutive scores of one call share their triple, so most lookups
// are three string comparisons with the previous one.
//
// Used by Ledger's writer thread only: not thread-safe.
#ifndef PLUMBLINE_DAEMON_LEDGER_SET_IDS_H_
#define PLUMBLINE_DAEMON_LEDGER_SET_IDS_H_

#include <cstdint>
#include <memory>
#include <string>

#include "absl/container/flat_hash_map.h"
#include "absl/status/statusor.h"
#include "daemon/ledger/ledger.h"
#include "daemon/ledger/sqlite_db.h"

namespace plumbline::daemon {

class LedgerSetIds {
 public:
  // Prepares its statements on `db`, which must outlive this object.
  static absl::StatusOr<std::unique_ptr<LedgerSetIds>> Create(SqliteDb& db);

  // The id of `score`'s (set_name, set_version, role), inserting it into
  // score_sets if new. REQUIRES: a write transaction is open on the db.
  absl::StatusOr<int64_t> Id(const ScoreEntry& score);

  // Drops what is cached; call after a rollback, which may have undone
  // inserts this object remembers.
  void Forget();

 private:
  LedgerSetIds() = default;

  std::unique_ptr<SqliteStatement> insert_;
  std::unique_ptr<SqliteStatement> find_;
  absl::flat_hash_map<std::string, int64_t> ids_;
  // The last triple looked up and its id (last_id_ < 0: none).
  std::string last_name_, last_version_;
  ScoreRole last_role_ = ScoreRole::kActive;
  int64_t last_id_ = -1;
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_LEDGER_SET_IDS_H_
