// File: daemon/ledger/wal_io.h
//
// The ledger's waits on the disk, taken off its writer thread so the writer
// can build the next group commit meanwhile (daemon/ledger.h):
//
//   WalSyncer        makes commits durable. The writer commits with
//                    synchronous=NORMAL (SQLite appends the transaction to
//                    the WAL file but does not fsync it) and then hands the
//                    commit's acknowledgement to After(); the syncer thread
//                    fdatasyncs the WAL file and only then runs it. That is
//                    the one fsync synchronous=FULL would have done inside
//                    COMMIT (SQLite, "PRAGMA synchronous": in WAL mode FULL
//                    syncs the WAL after each commit, NORMAL does not, and
//                    both keep the database consistent), so an acknowledged
//                    row is on disk as before; one fdatasync covers every
//                    commit handed over before it began. Unlike FULL, other
//                    connections may read a commit a few ms before its
//                    fsync; nothing is acknowledged before it.
//   WalCheckpointer  copies the WAL back into the database file (a PASSIVE
//                    checkpoint, which never blocks the writer) on its own
//                    connection and thread when the writer's WAL hook asks
//                    for one, instead of SQLite's automatic checkpoint, which
//                    runs inside the writer's COMMIT and fsyncs twice.
//
// Measured with tests/bench/ledger_bench's rows (2-core machine, 1000-row
// groups): an fdatasync took 3.9 ms (median; an appending file), the
// automatic checkpoints added 2-4 us of writer wall time per row, against
// about 2.2 us of SQLite CPU per row.
//
// Thread-safe: After(), Request() and CheckpointOn() may be called from any
// thread.
#ifndef PLUMBLINE_DAEMON_LEDGER_WAL_IO_H_
#define PLUMBLINE_DAEMON_LEDGER_WAL_IO_H_

#include <functional>
#include <memory>
#include <string>
#include <thread>
#include <vector>

#include "absl/base/thread_annotations.h"
#include "absl/status/status.h"
#include "absl/status/statusor.h"
#include "absl/synchronization/mutex.h"
#include "daemon/ledger/sqlite_db.h"

namespace plumbline::daemon {

class WalSyncer {
 public:
  // `wal_path` is the database's "-wal" file; it is opened at the first
  // sync (SQLite creates it with the first write).
  // Each fdatasync asks `env` first (daemon/ledger/env.h; must outlive this).
  WalSyncer(std::string wal_path, LedgerEnv* env);
  // Syncs and runs everything handed over, then stops.
  ~WalSyncer();
  WalSyncer(const WalSyncer&) = delete;
  WalSyncer& operator=(const WalSyncer&) = delete;

  // Runs `done` on the syncer thread with the result of an fdatasync of the
  // WAL that started after this call. REQUIRES: the commit to make durable
  // has returned.
  void After(std::function<void(absl::Status)> done);

 private:
  // Syncing threads: a commit that arrives while one thread is in fdatasync
  // is synced at once by the other instead of waiting for that call to end.
  static constexpr int kThreads = 2;

  void Loop();
  // fdatasync of `fd`; fd < 0 is -errno of the failed open.
  absl::Status Sync(int fd);

  const std::string wal_path_;
  LedgerEnv* const env_;

  absl::Mutex mu_;
  int fd_ ABSL_GUARDED_BY(mu_) = -1;  // opened by the first sync
  std::vector<std::function<void(absl::Status)>> pending_ ABSL_GUARDED_BY(mu_);
  bool stopping_ ABSL_GUARDED_BY(mu_) = false;
  std::vector<std::thread> threads_;
};

class WalCheckpointer {
 public:
  // Opens its own connection to `path`.
  static absl::StatusOr<std::unique_ptr<WalCheckpointer>> Start(
      const std::string& path, LedgerEnv* env);
  // Stops after the checkpoint in progress, if any.
  ~WalCheckpointer();
  WalCheckpointer(const WalCheckpointer&) = delete;
  WalCheckpointer& operator=(const WalCheckpointer&) = delete;

  // Asks for a checkpoint soon; requests while one is pending merge.
  void Request();

  // Checkpoints now on `db` (the writer's connection, between its
  // transactions), after the background checkpoint in progress: SQLite
  // refuses a second concurrent checkpoint. The WAL starts over only when a
  // checkpoint has copied all of it before the writer's next transaction
  // begins, which background checkpoints racing a busy writer rarely do.
  void CheckpointOn(SqliteDb& db);

 private:
  explicit WalCheckpointer(std::unique_ptr<SqliteDb> db) : db_(std::move(db)) {}
  void Loop();

  std::unique_ptr<SqliteDb> db_;  // checkpointer thread only
  absl::Mutex run_mu_;            // held while a checkpoint runs
  absl::Mutex mu_;
  bool wanted_ ABSL_GUARDED_BY(mu_) = false;
  bool stopping_ ABSL_GUARDED_BY(mu_) = false;
  std::thread thread_;
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_LEDGER_WAL_IO_H_
