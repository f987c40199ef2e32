// File: daemon/pg/pg_version_store.h
//
// The PostgreSQL backend of the version store (daemon/registry/
// version_store.h): the versions of every set, their activations and the
// audit in a PostgreSQL database that several plumbd replicas share, so a
// version loaded, approved, activated, shadowed or rolled back through any
// replica serves on all of them.
//
//   ASSIGN_OR_RETURN(std::unique_ptr<PgVersionStore> store,
//                    PgVersionStore::Open("postgresql://plumbline@db:5432/"
//                                         "plumbline"));
//   Lifecycle lifecycle(store.get());
//   ... attach the registry, Reload ...
//   RETURN_IF_ERROR(store->Watch([&] { lifecycle.Refresh(); }));
//   ...
//   store->StopWatch();  // before the lifecycle goes
//
// How replicas stay in step:
// - Changes take turns: InTransaction is BEGIN, then the transaction-level
//   advisory lock kPgVersionLockKey held to COMMIT, then the body. Reads
//   in the body (READ COMMITTED) see every change committed before the
//   lock was granted, so the lifecycle's checks and writes of different
//   replicas never interleave. The partial unique index one_active_version
//   keeps one active version per set whatever happens.
// - Every transaction that wrote something sends NOTIFY kPgVersionChannel
//   before COMMIT (delivered at COMMIT); a write outside InTransaction runs
//   as a transaction of its own, lock and notification included.
// - Watch runs a thread with its own connection that LISTENs on the
//   channel and calls on_change after each notification from another
//   connection, and every kPgVersionRecheck in any case (a notification
//   lost with a dropped connection only delays). A dropped connection is
//   replaced (retried every second), followed by one on_change call.
// Propagation: a change committed through one replica reaches the others'
// on_change within the notification's round trip (milliseconds) when the
// connections are up, and within kPgVersionRecheck (5 s) plus the time
// to reconnect otherwise.
//
// Thread-safety: the store methods are not thread-safe (one caller at a
// time, as every VersionStore: the lifecycle serializes them). Watch and
// StopWatch may be called from any thread; on_change runs on the watch
// thread, never concurrently with itself.
#ifndef PLUMBLINE_DAEMON_PG_PG_VERSION_STORE_H_
#define PLUMBLINE_DAEMON_PG_PG_VERSION_STORE_H_

#include <atomic>
#include <cstdint>
#include <functional>
#include <memory>
#include <optional>
#include <string>
#include <thread>
#include <vector>

#include "absl/base/thread_annotations.h"
#include "absl/status/status.h"
#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"
#include "absl/synchronization/mutex.h"
#include "absl/time/time.h"
#include "daemon/pg/pg_connection.h"
#include "daemon/registry/version_store.h"

namespace plumbline::daemon {

// The lock every version store transaction holds from BEGIN to COMMIT:
// "plumbver" in ASCII.
inline constexpr int64_t kPgVersionLockKey = 0x706c756d62766572;
// The channel a transaction that wrote versions, activations or audit
// notifies.
inline constexpr char kPgVersionChannel[] = "plumbline_versions";
// How often the watch thread calls on_change without a notification.
inline constexpr absl::Duration kPgVersionRecheck = absl::Seconds(5);

class PgVersionStore final : public VersionStore {
 public:
  // Connects to `uri` (a libpq URI, the password from PGPASSFILE or
  // ~/.pgpass) and migrates the schema (daemon/pg/pg_schema.h; safe when
  // the ledger or other replicas migrate at the same time).
  // InvalidArgument: not a PostgreSQL URI, or one with a password.
  // FailedPrecondition: the database's schema is newer than this build.
  // Unavailable: no connection.
  static absl::StatusOr<std::unique_ptr<PgVersionStore>> Open(
      absl::string_view uri);

  // Stops the watch thread, if any, and closes the connections.
  ~PgVersionStore() override;
  PgVersionStore(const PgVersionStore&) = delete;
  PgVersionStore& operator=(const PgVersionStore&) = delete;

  // Starts the watch thread (above). When it returns OK the thread listens
  // already: a change committed after this call reaches on_change.
  // FailedPrecondition if a watch is running; Unavailable if its connection
  // cannot be made. `on_change` must stay callable until StopWatch returns.
  absl::Status Watch(std::function<void()> on_change);
  // Stops the watch thread and waits for it (and a running on_change) to
  // end; nothing when there is none. REQUIRES: not called from on_change.
  void StopWatch();

  // VersionStore. A connection lost while idle is replaced at the next
  // call; one lost during a transaction fails it with Unavailable (and the
  // next call reconnects).
  absl::Status InTransaction(
      const std::function<absl::Status()>& body) override;
  absl::StatusOr<std::optional<VersionRecord>> Get(
      absl::string_view set, absl::string_view version) override;
  absl::StatusOr<std::vector<VersionRecord>> List(
      absl::string_view set) override;
  absl::StatusOr<std::optional<VersionRecord>> Active(
      absl::string_view set) override;
  absl::Status Insert(const VersionRecord& record) override;
  absl::Status SetState(absl::string_view set, absl::string_view version,
                        VersionState state) override;
  absl::Status RecordActivation(absl::string_view set,
                                absl::string_view version,
                                absl::Time at) override;
  absl::StatusOr<std::optional<std::string>> PreviousActive(
      absl::string_view set, absl::string_view current) override;
  absl::Status AppendAudit(const AuditRecord& record) override;
  absl::StatusOr<std::vector<AuditRecord>> Audit(
      absl::string_view set) override;
  absl::StatusOr<std::vector<std::string>> AuditActors(
      absl::string_view prefix) override;

 private:
  PgVersionStore(std::string uri, std::unique_ptr<PgConnection> db);

  // The connection, reconnected first if it was lost.
  absl::StatusOr<PgConnection*> Db();
  // Query on the connection; outside a transaction, retried once on a new
  // connection when the old one was lost.
  absl::StatusOr<PgResult> Read(absl::string_view sql,
                                std::vector<PgValue> params);
  // Runs `write` inside the current transaction, or as a transaction of its
  // own when there is none; marks the transaction as one to notify.
  absl::Status Write(const std::function<absl::Status(PgConnection&)>& write);
  // The watch thread's loop.
  void WatchLoop(std::unique_ptr<PgConnection> listener,
                 std::function<void()> on_change);

  const std::string uri_;

  // Used by one caller at a time (see the thread-safety note).
  std::unique_ptr<PgConnection> db_;
  // db_ failed with Unavailable: replaced at the next call outside a
  // transaction (never during one: callers may hold a reference to it).
  bool lost_ = false;
  bool in_transaction_ = false;
  bool wrote_ = false;
  // The server process of db_, so the watch thread can skip this store's
  // own notifications (the lifecycle already refreshed after them).
  std::atomic<int> own_pid_{0};

  // Serializes Watch and StopWatch.
  absl::Mutex watch_mu_;
  std::thread watcher_ ABSL_GUARDED_BY(watch_mu_);
  absl::Mutex stop_mu_ ABSL_ACQUIRED_AFTER(watch_mu_);
  bool stop_ ABSL_GUARDED_BY(stop_mu_) = false;
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_PG_PG_VERSION_STORE_H_
