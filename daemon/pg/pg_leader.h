// File: daemon/pg/pg_leader.h
//
// The fleet's leader among plumbd replicas that share a PostgreSQL ledger:
// whichever replica holds a session-level advisory lock on the database.
// The leader alone runs refit jobs (drift- or schedule-triggered, and those
// a person asks for), so a drift seen by every replica becomes one refit
// and one candidate, not one per replica. Every replica keeps trying to
// take the lock, so when the leader stops or its connection dies the
// server releases the lock and another replica takes over within about
// one retry interval.
//
//   ASSIGN_OR_RETURN(auto leader,
//                    PgLeader::Start(uri, kPgRefitLeaderLockKey,
//                                    "plumbd 10.0.0.7:7390"));
//   if (leader->is_leader()) { ... run the refit ... }
//
// What "at a time" means: a leader finds out that it lost its connection
// (and so the lock) at its next check, at most one retry interval later;
// until then two replicas may both believe they lead. A refit job that
// overlaps that window ends as one more candidate in the registry (whose
// changes are serialised by their own lock), never as a second active
// version: a person or the promotion rule still decides.
//
// Thread-safe: is_leader and Holder may be called from any thread.
#ifndef PLUMBLINE_DAEMON_PG_PG_LEADER_H_
#define PLUMBLINE_DAEMON_PG_PG_LEADER_H_

#include <atomic>
#include <cstdint>
#include <memory>
#include <string>
#include <thread>

#include "absl/base/thread_annotations.h"
#include "absl/status/statusor.h"
#include "absl/synchronization/mutex.h"
#include "absl/time/time.h"

namespace plumbline::daemon {

class PgConnection;

// The lock the refit leader holds: "plumblea" in ASCII.
inline constexpr int64_t kPgRefitLeaderLockKey = 0x706c756d626c6561;

class PgLeader {
 public:
  // Connects to `uri` (as PgConnection::Connect), names the session `who`
  // (its application_name: what Holder() reports to other replicas) and
  // starts the thread that takes and keeps the lock `key`, trying again
  // every `retry`. Returns at once; is_leader() turns true when the lock is
  // taken. Unavailable/InvalidArgument: as Connect, for the first
  // connection.
  static absl::StatusOr<std::unique_ptr<PgLeader>> Start(
      const std::string& uri, int64_t key, const std::string& who,
      absl::Duration retry = absl::Seconds(1));

  // Closes the connection (the server releases the lock at once).
  ~PgLeader();
  PgLeader(const PgLeader&) = delete;
  PgLeader& operator=(const PgLeader&) = delete;

  bool is_leader() const { return leader_.load(std::memory_order_acquire); }

  // The session name of the replica that holds the lock now ("" when none
  // does or it cannot be read), for messages to callers.
  std::string Holder() const;

 private:
  PgLeader(std::string uri, int64_t key, std::string who, absl::Duration retry);
  void Loop(std::unique_ptr<PgConnection> db);

  const std::string uri_;
  const int64_t key_;
  const std::string who_;
  const absl::Duration retry_;
  std::atomic<bool> leader_{false};
  mutable absl::Mutex mu_;
  bool stopping_ ABSL_GUARDED_BY(mu_) = false;
  std::string holder_ ABSL_GUARDED_BY(mu_);
  std::thread thread_;
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_PG_PG_LEADER_H_
