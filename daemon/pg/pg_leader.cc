// File: daemon/pg/pg_leader.cc
#include "daemon/pg/pg_leader.h"

#include <utility>

#include "absl/strings/str_cat.h"
#include "daemon/pg/pg_connection.h"
#include "daemon/util/event_log.h"

namespace plumbline::daemon {
namespace {

// Connects and names the session.
absl::StatusOr<std::unique_ptr<PgConnection>> ConnectAs(
    const std::string& uri, const std::string& who) {
  absl::StatusOr<std::unique_ptr<PgConnection>> db = PgConnection::Connect(uri);
  if (!db.ok()) return db.status();
  if (absl::Status st =
          (*db)
              ->Query("SELECT set_config('application_name', $1, false)", {who})
              .status();
      !st.ok()) {
    return st;
  }
  return db;
}

}  // namespace

PgLeader::PgLeader(std::string uri, int64_t key, std::string who,
                   absl::Duration retry)
    : uri_(std::move(uri)), key_(key), who_(std::move(who)), retry_(retry) {}

absl::StatusOr<std::unique_ptr<PgLeader>> PgLeader::Start(
    const std::string& uri, int64_t key, const std::string& who,
    absl::Duration retry) {
  absl::StatusOr<std::unique_ptr<PgConnection>> db = ConnectAs(uri, who);
  if (!db.ok()) return db.status();
  std::unique_ptr<PgLeader> leader(new PgLeader(uri, key, who, retry));
  leader->thread_ =
      std::thread([l = leader.get(), c = *std::move(db)]() mutable {
        l->Loop(std::move(c));
      });
  return leader;
}

PgLeader::~PgLeader() {
  {
    absl::MutexLock lock(&mu_);
    stopping_ = true;
  }
  if (thread_.joinable()) thread_.join();
}

std::string PgLeader::Holder() const {
  absl::MutexLock lock(&mu_);
  return holder_;
}

void PgLeader::Loop(std::unique_ptr<PgConnection> db) {
  // The key as pg_locks shows a bigint advisory lock: classid the high 32
  // bits, objid the low 32, objsubid 1.
  const std::string classid =
      absl::StrCat(static_cast<uint32_t>(static_cast<uint64_t>(key_) >> 32));
  const std::string objid =
      absl::StrCat(static_cast<uint32_t>(static_cast<uint64_t>(key_)));
  for (;;) {
    if (db == nullptr) {
      absl::StatusOr<std::unique_ptr<PgConnection>> c = ConnectAs(uri_, who_);
      if (c.ok()) db = *std::move(c);
    }
    absl::Status st = db == nullptr ? absl::UnavailableError("no connection")
                                    : absl::OkStatus();
    if (st.ok() && !is_leader()) {
      absl::StatusOr<bool> taken = db->TryAdvisoryLock(key_);
      st = taken.status();
      if (st.ok() && *taken) {
        leader_.store(true, std::memory_order_release);
        LogEvent(LogLevel::kInfo, "fleet_leader_taken",
                 {{"who", who_}, {"role", "runs the fleet's refit jobs"}});
      }
    } else if (st.ok()) {
      // Still connected means still holding the lock.
      st = db->Exec("SELECT 1");
    }
    std::string holder;
    if (st.ok()) {
      absl::StatusOr<PgResult> r = db->Query(
          "SELECT a.application_name FROM pg_locks l JOIN pg_stat_activity a"
          " ON a.pid = l.pid WHERE l.locktype = 'advisory' AND l.granted"
          " AND l.classid = $1::oid AND l.objid = $2::oid AND l.objsubid = 1",
          {classid, objid});
      st = r.status();
      if (r.ok() && !r->rows.empty() && r->rows[0][0]) holder = *r->rows[0][0];
    }
    if (!st.ok()) {
      if (is_leader()) {
        LogEvent(LogLevel::kWarning, "fleet_leader_lost",
                 {{"who", who_},
                  {"error", st.message()},
                  {"effect", "another replica takes over the refit jobs"}});
      }
      leader_.store(false, std::memory_order_release);
      db.reset();  // the server releases the lock with the session
    }
    absl::MutexLock lock(&mu_);
    holder_ = holder;
    auto stop = [this]()
                    ABSL_EXCLUSIVE_LOCKS_REQUIRED(mu_) { return stopping_; };
    if (mu_.AwaitWithTimeout(absl::Condition(&stop), retry_)) break;
  }
  leader_.store(false, std::memory_order_release);
}

}  // namespace plumbline::daemon
