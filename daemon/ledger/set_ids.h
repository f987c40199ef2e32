// File: daemon/ledger/set_ids.h
//
// The ledger stores the (set name, set version, role) of a score once, in
// the table score_sets, and each score row refers to it by a small integer
// (schema version 2): rows get shorter and the index by set compares
// integers, which makes ingest markedly cheaper (tests/bench/ledger_bench).
// A set's name has its own small integer too (table set_names, schema 5):
// an active-role score row carries it in scores.primary_set, and the unique
// index scores_by_record(record_id, primary_set) keeps one record id to one
// score per set. LedgerSetIds hands the writer both ids of a score,
// adding rows the first time a triple or a name is seen, and keeps them in
// memory. Consecutive scores of one call share their triple, so most
// lookups are three string comparisons with the previous one.
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

struct LedgerSetId {
  int64_t set_id = -1;   // score_sets.id of (name, version, role)
  int64_t name_id = -1;  // set_names.id of the name
};

class LedgerSetIds {
 public:
  // Prepares its statements on `db`, which must outlive this object.
  static absl::StatusOr<std::unique_ptr<LedgerSetIds>> Create(SqliteDb& db);

  // The ids of `score`'s set, inserting rows into score_sets and set_names
  // if new. REQUIRES: a write transaction is open on the db.
  absl::StatusOr<LedgerSetId> Id(const ScoreEntry& score);

  // Drops what is cached; call after a rollback, which may have undone
  // inserts this object remembers.
  void Forget();

 private:
  LedgerSetIds() = default;

  // The id of `name` in set_names, inserting it if new.
  absl::StatusOr<int64_t> NameId(const std::string& name);

  std::unique_ptr<SqliteStatement> insert_, find_;
  std::unique_ptr<SqliteStatement> insert_name_, find_name_;
  absl::flat_hash_map<std::string, LedgerSetId> ids_;
  absl::flat_hash_map<std::string, int64_t> name_ids_;
  // The last triple looked up and its ids (last_.set_id < 0: none).
  std::string last_name_, last_version_;
  ScoreRole last_role_ = ScoreRole::kActive;
  LedgerSetId last_;
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_LEDGER_SET_IDS_H_
