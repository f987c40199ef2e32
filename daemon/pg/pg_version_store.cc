// File: daemon/pg/pg_version_store.cc
#include "daemon/pg/pg_version_store.h"

#include <algorithm>
#include <type_traits>
#include <utility>

#include "absl/strings/numbers.h"
#include "absl/strings/str_cat.h"
#include "daemon/pg/pg_schema.h"
#include "daemon/util/event_log.h"

namespace plumbline::daemon {
namespace {

// How long the watch thread waits at a time, so StopWatch is prompt.
constexpr absl::Duration kWatchSlice = absl::Milliseconds(200);
// How long the watch thread waits between attempts to reconnect.
constexpr absl::Duration kReconnectPause = absl::Seconds(1);

constexpr char kVersionColumns[] =
    "set_name, version, state, created_at_us, created_by, reason, comparison,"
    " source, document";

std::string Text(const PgValue& v) { return v.value_or(""); }

absl::Time MicrosToTime(const PgValue& v) {
  int64_t us = 0;
  // The columns are bigint NOT NULL: always digits.
  if (v.has_value()) (void)absl::SimpleAtoi(*v, &us);
  return absl::FromUnixMicros(us);
}

std::string TimeToMicros(absl::Time t) {
  return absl::StrCat(absl::ToUnixMicros(t));
}

VersionRecord ReadVersion(const PgRow& row) {
  VersionRecord r;
  r.set = Text(row[0]);
  r.version = Text(row[1]);
  // The table's CHECK constraint admits only the four names.
  r.state = ParseVersionState(Text(row[2])).value_or(VersionState::kRetired);
  r.created_at = MicrosToTime(row[3]);
  r.created_by = Text(row[4]);
  r.reason = Text(row[5]);
  r.comparison = Text(row[6]);
  r.source = Text(row[7]);
  r.document = Text(row[8]);
  return r;
}

}  // namespace

absl::StatusOr<std::unique_ptr<PgVersionStore>> PgVersionStore::Open(
    absl::string_view uri) {
  absl::StatusOr<std::unique_ptr<PgConnection>> db = PgConnection::Connect(uri);
  if (!db.ok()) return db.status();
  if (absl::StatusOr<int> v = MigratePgLedger(**db); !v.ok()) {
    return v.status();
  }
  return std::unique_ptr<PgVersionStore>(
      new PgVersionStore(std::string(uri), *std::move(db)));
}

PgVersionStore::PgVersionStore(std::string uri,
                               std::unique_ptr<PgConnection> db)
    : uri_(std::move(uri)), db_(std::move(db)) {
  own_pid_.store(db_->backend_pid());
}

PgVersionStore::~PgVersionStore() { StopWatch(); }

absl::StatusOr<PgConnection*> PgVersionStore::Db() {
  if (lost_) {
    if (in_transaction_) {
      // A new connection would run the rest of the body outside it.
      return absl::UnavailableError(
          "PostgreSQL version store: the connection was lost in a "
          "transaction");
    }
    db_.reset();
    lost_ = false;
  }
  if (db_ != nullptr) return db_.get();
  absl::StatusOr<std::unique_ptr<PgConnection>> db =
      PgConnection::Connect(uri_);
  if (!db.ok()) return db.status();
  db_ = *std::move(db);
  own_pid_.store(db_->backend_pid());
  return db_.get();
}

namespace {

// `result`, after setting `lost` when it says the connection is gone (the
// next call outside a transaction replaces it).
template <typename T>
T Checked(T result, bool& lost) {
  const absl::Status& s = [&]() -> const absl::Status& {
    if constexpr (std::is_same_v<T, absl::Status>) {
      return result;
    } else {
      return result.status();
    }
  }();
  if (s.code() == absl::StatusCode::kUnavailable) lost = true;
  return result;
}

}  // namespace

absl::StatusOr<PgResult> PgVersionStore::Read(absl::string_view sql,
                                              std::vector<PgValue> params) {
  for (int attempt = 0;; ++attempt) {
    absl::StatusOr<PgConnection*> db = Db();
    if (!db.ok()) return db.status();
    absl::StatusOr<PgResult> r = Checked((*db)->Query(sql, params), lost_);
    // Outside a transaction a read on a connection lost while idle is
    // retried once on a new one.
    if (r.ok() || !lost_ || in_transaction_ || attempt > 0) return r;
  }
}

absl::Status PgVersionStore::InTransaction(
    const std::function<absl::Status()>& body) {
  if (in_transaction_) {
    return absl::FailedPreconditionError(
        "PostgreSQL version store: a transaction is already open");
  }
  absl::Status begun;
  for (int attempt = 0; attempt < 2; ++attempt) {
    absl::StatusOr<PgConnection*> db = Db();
    if (!db.ok()) return db.status();
    // Lost while idle: once more on a new connection.
    begun = Checked((*db)->Exec("BEGIN"), lost_);
    if (begun.ok() || !lost_) break;
  }
  if (!begun.ok()) return begun;
  absl::Status result = Checked(db_->Query("SELECT pg_advisory_xact_lock($1)",
                                           {absl::StrCat(kPgVersionLockKey)}),
                                lost_)
                            .status();
  in_transaction_ = true;
  wrote_ = false;
  if (result.ok()) result = body();
  if (result.ok() && wrote_ && !lost_) {
    // Delivered to the listeners at COMMIT, not at all on ROLLBACK.
    result = Checked(db_->Notify(kPgVersionChannel, ""), lost_);
  }
  in_transaction_ = false;
  wrote_ = false;
  if (lost_) {
    return result.ok() ? absl::UnavailableError(
                             "PostgreSQL version store: the connection was "
                             "lost in a transaction")
                       : result;
  }
  if (result.ok()) result = Checked(db_->Exec("COMMIT"), lost_);
  if (!result.ok() && !lost_) {
    Checked(db_->Exec("ROLLBACK"), lost_).IgnoreError();
  }
  return result;
}

absl::Status PgVersionStore::Write(
    const std::function<absl::Status(PgConnection&)>& write) {
  if (!in_transaction_) {
    return InTransaction([&]() { return Write(write); });
  }
  absl::StatusOr<PgConnection*> db = Db();
  if (!db.ok()) return db.status();
  wrote_ = true;
  return Checked(write(**db), lost_);
}

absl::StatusOr<std::optional<VersionRecord>> PgVersionStore::Get(
    absl::string_view set, absl::string_view version) {
  absl::StatusOr<PgResult> r =
      Read(absl::StrCat("SELECT ", kVersionColumns,
                        " FROM set_versions WHERE set_name = $1"
                        " AND version = $2"),
           {std::string(set), std::string(version)});
  if (!r.ok()) return r.status();
  if (r->rows.empty()) return std::optional<VersionRecord>();
  return std::optional<VersionRecord>(ReadVersion(r->rows[0]));
}

absl::StatusOr<std::vector<VersionRecord>> PgVersionStore::List(
    absl::string_view set) {
  absl::StatusOr<PgResult> r = Read(
      absl::StrCat("SELECT ", kVersionColumns,
                   " FROM set_versions WHERE $1::text = '' OR set_name = $1"
                   " ORDER BY set_name, created_at_us DESC, version DESC"),
      {std::string(set)});
  if (!r.ok()) return r.status();
  std::vector<VersionRecord> out;
  out.reserve(r->rows.size());
  for (const PgRow& row : r->rows) out.push_back(ReadVersion(row));
  return out;
}

absl::StatusOr<std::optional<VersionRecord>> PgVersionStore::Active(
    absl::string_view set) {
  absl::StatusOr<PgResult> r =
      Read(absl::StrCat("SELECT ", kVersionColumns,
                        " FROM set_versions WHERE set_name = $1"
                        " AND state = 'active'"),
           {std::string(set)});
  if (!r.ok()) return r.status();
  if (r->rows.empty()) return std::optional<VersionRecord>();
  return std::optional<VersionRecord>(ReadVersion(r->rows[0]));
}

absl::Status PgVersionStore::Insert(const VersionRecord& r) {
  return Write([&](PgConnection& db) -> absl::Status {
    absl::StatusOr<std::optional<VersionRecord>> known = Get(r.set, r.version);
    if (!known.ok()) return known.status();
    if (known->has_value()) {
      return absl::AlreadyExistsError(absl::StrCat(
          "set '", r.set, "' already has a version '", r.version,
          "'; versions are immutable: give the new one another version"));
    }
    return db
        .Query(absl::StrCat("INSERT INTO set_versions(", kVersionColumns,
                            ") VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9)"),
               {r.set, r.version, std::string(VersionStateName(r.state)),
                TimeToMicros(r.created_at), r.created_by, r.reason,
                r.comparison, r.source, r.document})
        .status();
  });
}

absl::Status PgVersionStore::SetState(absl::string_view set,
                                      absl::string_view version,
                                      VersionState state) {
  return Write([&](PgConnection& db) -> absl::Status {
    absl::StatusOr<PgResult> r = db.Query(
        "UPDATE set_versions SET state = $3 WHERE set_name = $1"
        " AND version = $2",
        {std::string(set), std::string(version),
         std::string(VersionStateName(state))});
    if (!r.ok()) return r.status();
    if (r->affected_rows == 0) {
      return absl::NotFoundError(
          absl::StrCat("set '", set, "' has no version '", version, "'"));
    }
    return absl::OkStatus();
  });
}

absl::Status PgVersionStore::RecordActivation(absl::string_view set,
                                              absl::string_view version,
                                              absl::Time at) {
  return Write([&](PgConnection& db) {
    return db
        .Query(
            "INSERT INTO set_activations(set_name, version, at_us)"
            " VALUES ($1, $2, $3)",
            {std::string(set), std::string(version), TimeToMicros(at)})
        .status();
  });
}

absl::StatusOr<std::optional<std::string>> PgVersionStore::PreviousActive(
    absl::string_view set, absl::string_view current) {
  // The newest activation of another version that came before the newest
  // activation of `current`.
  absl::StatusOr<PgResult> r = Read(
      "SELECT version FROM set_activations WHERE set_name = $1"
      " AND version <> $2 AND seq < (SELECT COALESCE(MAX(seq), 0) FROM"
      " set_activations WHERE set_name = $1 AND version = $2)"
      " ORDER BY seq DESC LIMIT 1",
      {std::string(set), std::string(current)});
  if (!r.ok()) return r.status();
  if (r->rows.empty()) return std::optional<std::string>();
  return std::optional<std::string>(Text(r->rows[0][0]));
}

absl::Status PgVersionStore::AppendAudit(const AuditRecord& r) {
  return Write([&](PgConnection& db) {
    return db
        .Query(
            "INSERT INTO audit(at_us, set_name, version, action, actor,"
            " detail) VALUES ($1, $2, $3, $4, $5, $6)",
            {TimeToMicros(r.at), r.set, r.version, r.action, r.actor, r.detail})
        .status();
  });
}

absl::StatusOr<std::vector<AuditRecord>> PgVersionStore::Audit(
    absl::string_view set) {
  absl::StatusOr<PgResult> r = Read(
      "SELECT at_us, set_name, version, action, actor, detail FROM audit"
      " WHERE set_name = $1 ORDER BY id",
      {std::string(set)});
  if (!r.ok()) return r.status();
  std::vector<AuditRecord> out;
  out.reserve(r->rows.size());
  for (const PgRow& row : r->rows) {
    out.push_back(AuditRecord{MicrosToTime(row[0]), Text(row[1]), Text(row[2]),
                              Text(row[3]), Text(row[4]), Text(row[5])});
  }
  return out;
}

absl::StatusOr<std::vector<std::string>> PgVersionStore::AuditActors(
    absl::string_view prefix) {
  absl::StatusOr<PgResult> r = Read(
      "SELECT DISTINCT actor FROM audit"
      " WHERE starts_with(actor, $1)",
      {std::string(prefix)});
  if (!r.ok()) return r.status();
  std::vector<std::string> out;
  out.reserve(r->rows.size());
  for (const PgRow& row : r->rows) out.push_back(Text(row[0]));
  return out;
}

absl::Status PgVersionStore::Watch(std::function<void()> on_change) {
  absl::MutexLock lock(&watch_mu_);
  if (watcher_.joinable()) {
    return absl::FailedPreconditionError(
        "PostgreSQL version store: already watching");
  }
  absl::StatusOr<std::unique_ptr<PgConnection>> listener =
      PgConnection::Connect(uri_);
  if (!listener.ok()) return listener.status();
  if (absl::Status s = (*listener)->Listen(kPgVersionChannel); !s.ok()) {
    return s;
  }
  {
    absl::MutexLock stop_lock(&stop_mu_);
    stop_ = false;
  }
  watcher_ = std::thread(
      [this, l = *std::move(listener), f = std::move(on_change)]() mutable {
        WatchLoop(std::move(l), std::move(f));
      });
  return absl::OkStatus();
}

void PgVersionStore::StopWatch() {
  absl::MutexLock lock(&watch_mu_);
  if (!watcher_.joinable()) return;
  {
    absl::MutexLock stop_lock(&stop_mu_);
    stop_ = true;
  }
  watcher_.join();
}

void PgVersionStore::WatchLoop(std::unique_ptr<PgConnection> listener,
                               std::function<void()> on_change) {
  absl::Time next_check = absl::Now() + kPgVersionRecheck;
  for (;;) {
    {
      absl::MutexLock lock(&stop_mu_);
      if (stop_) return;
    }
    if (listener == nullptr) {
      absl::StatusOr<std::unique_ptr<PgConnection>> c =
          PgConnection::Connect(uri_);
      absl::Status s = c.status();
      if (s.ok()) s = (*c)->Listen(kPgVersionChannel);
      if (!s.ok()) {
        LogEvent(LogLevel::kWarning, "version_watch_reconnect_failed",
                 {{"error", s.message()}});
        absl::MutexLock lock(&stop_mu_);
        stop_mu_.AwaitWithTimeout(absl::Condition(&stop_), kReconnectPause);
        continue;
      }
      listener = *std::move(c);
      // Whatever changed while the connection was down.
      on_change();
      next_check = absl::Now() + kPgVersionRecheck;
      continue;
    }
    const absl::Duration wait =
        std::clamp(next_check - absl::Now(), absl::ZeroDuration(), kWatchSlice);
    absl::StatusOr<std::vector<PgNotification>> got =
        listener->WaitForNotification(wait);
    if (!got.ok()) {
      LogEvent(LogLevel::kWarning, "version_watch_connection_lost",
               {{"error", got.status().message()}});
      listener.reset();
      continue;
    }
    const int own = own_pid_.load();
    const bool from_others = std::any_of(
        got->begin(), got->end(),
        [&](const PgNotification& n) { return n.sender_pid != own; });
    const bool due = absl::Now() >= next_check;
    if (due) {
      // A connection that died without a word (no FIN) shows here.
      if (absl::Status s = listener->Query("SELECT 1").status(); !s.ok()) {
        LogEvent(LogLevel::kWarning, "version_watch_connection_lost",
                 {{"error", s.message()}});
        listener.reset();
        continue;
      }
    }
    if (from_others || due) {
      on_change();
      next_check = absl::Now() + kPgVersionRecheck;
    }
  }
}

}  // namespace plumbline::daemon
