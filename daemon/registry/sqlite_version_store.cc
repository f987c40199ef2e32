// File: daemon/registry/sqlite_version_store.cc
#include "daemon/registry/sqlite_version_store.h"

#include <utility>

#include "absl/strings/str_cat.h"

namespace plumbline::daemon {
namespace {

int64_t Micros(absl::Time t) { return absl::ToUnixMicros(t); }

constexpr char kVersionColumns[] =
    "set_name, version, state, created_at_us, created_by, reason, comparison,"
    " source, document";

VersionRecord ReadVersion(const SqliteStatement& s) {
  VersionRecord r;
  r.set = s.ColumnText(0);
  r.version = s.ColumnText(1);
  // The table's CHECK constraint admits only the four names.
  r.state = ParseVersionState(s.ColumnText(2)).value_or(VersionState::kRetired);
  r.created_at = absl::FromUnixMicros(s.ColumnInt64(3));
  r.created_by = s.ColumnText(4);
  r.reason = s.ColumnText(5);
  r.comparison = s.ColumnText(6);
  r.source = s.ColumnText(7);
  r.document = s.ColumnText(8);
  return r;
}

// Runs a prepared query and collects its rows with `read`.
template <typename T, typename Read>
absl::StatusOr<std::vector<T>> Collect(SqliteStatement& s, Read read) {
  std::vector<T> out;
  for (;;) {
    absl::StatusOr<bool> more = s.Step();
    if (!more.ok()) return more.status();
    if (!*more) return out;
    out.push_back(read(s));
  }
}

}  // namespace

absl::StatusOr<std::unique_ptr<VersionStore>> SqliteVersionStore::Open(
    const std::string& ledger_path, LedgerEnv* env) {
  absl::StatusOr<std::unique_ptr<SqliteDb>> db =
      SqliteDb::Open(ledger_path, env);
  if (!db.ok()) return db.status();
  if (absl::Status s = (*db)->Exec("PRAGMA synchronous=FULL"); !s.ok()) {
    return s;
  }
  return std::unique_ptr<VersionStore>(new SqliteVersionStore(*std::move(db)));
}

absl::Status SqliteVersionStore::InTransaction(
    const std::function<absl::Status()>& body) {
  if (absl::Status s = db_->Exec("BEGIN IMMEDIATE"); !s.ok()) return s;
  absl::Status result = body();
  if (result.ok()) result = db_->Exec("COMMIT");
  if (!result.ok()) db_->Exec("ROLLBACK").IgnoreError();
  return result;
}

absl::StatusOr<std::optional<VersionRecord>> SqliteVersionStore::Get(
    absl::string_view set, absl::string_view version) {
  auto q = db_->Prepare(absl::StrCat("SELECT ", kVersionColumns,
                                     " FROM set_versions WHERE set_name = ?1"
                                     " AND version = ?2"));
  if (!q.ok()) return q.status();
  (*q)->BindText(1, set);
  (*q)->BindText(2, version);
  absl::StatusOr<bool> row = (*q)->Step();
  if (!row.ok()) return row.status();
  if (!*row) return std::optional<VersionRecord>();
  return std::optional<VersionRecord>(ReadVersion(**q));
}

absl::StatusOr<std::vector<VersionRecord>> SqliteVersionStore::List(
    absl::string_view set) {
  auto q = db_->Prepare(
      absl::StrCat("SELECT ", kVersionColumns,
                   " FROM set_versions WHERE ?1 = '' OR set_name = ?1"
                   " ORDER BY set_name, created_at_us DESC, version DESC"));
  if (!q.ok()) return q.status();
  (*q)->BindText(1, set);
  return Collect<VersionRecord>(**q, ReadVersion);
}

absl::StatusOr<std::optional<VersionRecord>> SqliteVersionStore::Active(
    absl::string_view set) {
  auto q = db_->Prepare(absl::StrCat("SELECT ", kVersionColumns,
                                     " FROM set_versions WHERE set_name = ?1"
                                     " AND state = 'active'"));
  if (!q.ok()) return q.status();
  (*q)->BindText(1, set);
  absl::StatusOr<bool> row = (*q)->Step();
  if (!row.ok()) return row.status();
  if (!*row) return std::optional<VersionRecord>();
  return std::optional<VersionRecord>(ReadVersion(**q));
}

absl::Status SqliteVersionStore::Insert(const VersionRecord& r) {
  absl::StatusOr<std::optional<VersionRecord>> known = Get(r.set, r.version);
  if (!known.ok()) return known.status();
  if (known->has_value()) {
    return absl::AlreadyExistsError(absl::StrCat(
        "set '", r.set, "' already has a version '", r.version,
        "'; versions are immutable: give the new one another version"));
  }
  auto q =
      db_->Prepare(absl::StrCat("INSERT INTO set_versions(", kVersionColumns,
                                ") VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7,"
                                " ?8, ?9)"));
  if (!q.ok()) return q.status();
  SqliteStatement& s = **q;
  s.BindText(1, r.set);
  s.BindText(2, r.version);
  s.BindText(3, VersionStateName(r.state));
  s.BindInt64(4, Micros(r.created_at));
  s.BindText(5, r.created_by);
  s.BindText(6, r.reason);
  s.BindText(7, r.comparison);
  s.BindText(8, r.source);
  s.BindText(9, r.document);
  return s.Run();
}

absl::Status SqliteVersionStore::SetState(absl::string_view set,
                                          absl::string_view version,
                                          VersionState state) {
  auto q = db_->Prepare(
      "UPDATE set_versions SET state = ?3 WHERE set_name = ?1 AND version = "
      "?2");
  if (!q.ok()) return q.status();
  (*q)->BindText(1, set);
  (*q)->BindText(2, version);
  (*q)->BindText(3, VersionStateName(state));
  if (absl::Status s = (*q)->Run(); !s.ok()) return s;
  if (db_->Changes() == 0) {
    return absl::NotFoundError(
        absl::StrCat("set '", set, "' has no version '", version, "'"));
  }
  return absl::OkStatus();
}

absl::Status SqliteVersionStore::RecordActivation(absl::string_view set,
                                                  absl::string_view version,
                                                  absl::Time at) {
  auto q = db_->Prepare(
      "INSERT INTO set_activations(set_name, version, at_us) VALUES (?1, ?2, "
      "?3)");
  if (!q.ok()) return q.status();
  (*q)->BindText(1, set);
  (*q)->BindText(2, version);
  (*q)->BindInt64(3, Micros(at));
  return (*q)->Run();
}

absl::StatusOr<std::optional<std::string>> SqliteVersionStore::PreviousActive(
    absl::string_view set, absl::string_view current) {
  // The newest activation of another version that came before the newest
  // activation of `current`.
  auto q = db_->Prepare(
      "SELECT version FROM set_activations WHERE set_name = ?1"
      " AND version <> ?2 AND seq < (SELECT COALESCE(MAX(seq), 0) FROM"
      " set_activations WHERE set_name = ?1 AND version = ?2)"
      " ORDER BY seq DESC LIMIT 1");
  if (!q.ok()) return q.status();
  (*q)->BindText(1, set);
  (*q)->BindText(2, current);
  absl::StatusOr<bool> row = (*q)->Step();
  if (!row.ok()) return row.status();
  if (!*row) return std::optional<std::string>();
  return std::optional<std::string>((*q)->ColumnText(0));
}

absl::Status SqliteVersionStore::AppendAudit(const AuditRecord& r) {
  auto q = db_->Prepare(
      "INSERT INTO audit(at_us, set_name, version, action, actor, detail)"
      " VALUES (?1, ?2, ?3, ?4, ?5, ?6)");
  if (!q.ok()) return q.status();
  SqliteStatement& s = **q;
  s.BindInt64(1, Micros(r.at));
  s.BindText(2, r.set);
  s.BindText(3, r.version);
  s.BindText(4, r.action);
  s.BindText(5, r.actor);
  s.BindText(6, r.detail);
  return s.Run();
}

absl::StatusOr<std::vector<std::string>> SqliteVersionStore::AuditActors(
    absl::string_view prefix) {
  auto q = db_->Prepare(
      "SELECT DISTINCT actor FROM audit"
      " WHERE substr(actor, 1, length(?1)) = ?1");
  if (!q.ok()) return q.status();
  (*q)->BindText(1, prefix);
  return Collect<std::string>(
      **q, [](const SqliteStatement& s) { return s.ColumnText(0); });
}

absl::StatusOr<std::vector<AuditRecord>> SqliteVersionStore::Audit(
    absl::string_view set) {
  auto q = db_->Prepare(
      "SELECT at_us, set_name, version, action, actor, detail FROM audit"
      " WHERE set_name = ?1 ORDER BY id");
  if (!q.ok()) return q.status();
  (*q)->BindText(1, set);
  return Collect<AuditRecord>(**q, [](const SqliteStatement& s) {
    return AuditRecord{absl::FromUnixMicros(s.ColumnInt64(0)),
                       s.ColumnText(1),
                       s.ColumnText(2),
                       s.ColumnText(3),
                       s.ColumnText(4),
                       s.ColumnText(5)};
  });
}

}  // namespace plumbline::daemon
