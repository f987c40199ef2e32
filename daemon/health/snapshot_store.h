// File: daemon/health/snapshot_store.h
//
// Snapshots of the monitor's windows in the ledger (table health_snapshots,
// daemon/ledger/schema.h), so a restart restores each monitored version's
// window state and reads only the ledger rows written after it, instead of
// every row of the windows' span (daemon/health/rebuild.h): on a ledger of
// millions of rows that is the difference between a second and minutes.
//
// A snapshot holds one version's window state (v1::HealthWindowsState,
// serialized), the fingerprint of what shaped it (plan, options: a state
// from other options is never restored) and the ledger marks it is whole up
// to (daemon/ledger/ledger.h LedgerMarks), with the record ids stored at
// those marks when it was written: a restart checks they are still there,
// since an id is reused only if every row above it was deleted. HealthMonitor
// takes them (Capture) and restores them (RestoreFrom); plumbd saves them at
// every tick and on shutdown.
//
//   auto store = SnapshotStore::Open("var/ledger.db");
//   (*store)->Save(snapshots);                         // each tick
//   absl::StatusOr<std::vector<WindowSnapshot>> s = (*store)->Load();
//
// Bounded: one row per monitored version (Save replaces them all).
// Thread-safe: one connection of its own (WAL: a write waits for the
// ledger's writer for at most the busy timeout), guarded by a mutex.
#ifndef PLUMBLINE_DAEMON_HEALTH_SNAPSHOT_STORE_H_
#define PLUMBLINE_DAEMON_HEALTH_SNAPSHOT_STORE_H_

#include <memory>
#include <string>
#include <vector>

#include "absl/base/thread_annotations.h"
#include "absl/status/statusor.h"
#include "absl/synchronization/mutex.h"
#include "absl/time/time.h"
#include "daemon/ledger/env.h"
#include "daemon/ledger/ledger.h"
#include "daemon/ledger/sqlite_db.h"

namespace plumbline::daemon {

struct WindowSnapshot {
  std::string set_name;
  std::string version;
  absl::Time taken_at;
  // Every ledger row up to these marks is in `state`, none after.
  LedgerMarks marks;
  // The record ids at the marks when saved (Load fills them; Save reads
  // them from the ledger itself).
  MarkRecords mark_records;
  std::string fingerprint;
  std::string state;  // a serialized v1::HealthWindowsState
};

class SnapshotStore {
 public:
  // `env` as the ledger's (null: the default).
  static absl::StatusOr<std::unique_ptr<SnapshotStore>> Open(
      const std::string& ledger_path, LedgerEnv* env = nullptr);

  // Makes `snapshots` the stored ones, in one transaction: versions not
  // among them lose theirs. Returns the bytes written.
  absl::StatusOr<int64_t> Save(const std::vector<WindowSnapshot>& snapshots);
  // The stored snapshots.
  absl::StatusOr<std::vector<WindowSnapshot>> Load();

 private:
  explicit SnapshotStore(std::unique_ptr<SqliteDb> db) : db_(std::move(db)) {}
  // Rolls the open transaction back and returns `cause`.
  absl::Status RolledBack(absl::Status cause)
      ABSL_EXCLUSIVE_LOCKS_REQUIRED(mu_);

  absl::Mutex mu_;
  std::unique_ptr<SqliteDb> db_ ABSL_GUARDED_BY(mu_);
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_HEALTH_SNAPSHOT_STORE_H_
