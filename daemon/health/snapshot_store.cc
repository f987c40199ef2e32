// File: daemon/health/snapshot_store.cc
#include "daemon/health/snapshot_store.h"

#include <cstdint>
#include <utility>

namespace plumbline::daemon {

absl::StatusOr<std::unique_ptr<SnapshotStore>> SnapshotStore::Open(
    const std::string& ledger_path, LedgerEnv* env) {
  absl::StatusOr<std::unique_ptr<SqliteDb>> db =
      SqliteDb::Open(ledger_path, env);
  if (!db.ok()) return db.status();
  return std::unique_ptr<SnapshotStore>(new SnapshotStore(*std::move(db)));
}

absl::StatusOr<int64_t> SnapshotStore::Save(
    const std::vector<WindowSnapshot>& snapshots) {
  absl::MutexLock lock(&mu_);
  absl::StatusOr<std::unique_ptr<SqliteStatement>> insert = db_->Prepare(
      "INSERT INTO health_snapshots(set_name, version, taken_at_us,"
      " score_mark, score_mark_record, outcome_mark, outcome_mark_record,"
      " fingerprint, state) VALUES (?1, ?2, ?3, ?4,"
      " coalesce((SELECT record_id FROM scores WHERE id = ?4), ''), ?5,"
      " coalesce((SELECT record_id FROM outcomes WHERE seq = ?5), ''),"
      " ?6, ?7)");
  if (!insert.ok()) return insert.status();
  if (absl::Status s = db_->Exec("BEGIN IMMEDIATE"); !s.ok()) return s;
  if (absl::Status s = db_->Exec("DELETE FROM health_snapshots"); !s.ok()) {
    return RolledBack(s);
  }
  int64_t bytes = 0;
  for (const WindowSnapshot& w : snapshots) {
    SqliteStatement& s = **insert;
    s.BindText(1, w.set_name);
    s.BindText(2, w.version);
    s.BindInt64(3, absl::ToUnixMicros(w.taken_at));
    s.BindInt64(4, w.marks.score_id);
    s.BindInt64(5, w.marks.outcome_seq);
    s.BindText(6, w.fingerprint);
    s.BindBlobNoCopy(7, w.state);
    if (absl::Status st = s.Run(); !st.ok()) return RolledBack(st);
    bytes += static_cast<int64_t>(w.state.size());
  }
  if (absl::Status s = db_->Exec("COMMIT"); !s.ok()) return RolledBack(s);
  return bytes;
}

absl::Status SnapshotStore::RolledBack(absl::Status cause) {
  db_->Exec("ROLLBACK").IgnoreError();  // the first error is the one
  return cause;
}

absl::StatusOr<std::vector<WindowSnapshot>> SnapshotStore::Load() {
  absl::MutexLock lock(&mu_);
  absl::StatusOr<std::unique_ptr<SqliteStatement>> select = db_->Prepare(
      "SELECT set_name, version, taken_at_us, score_mark, score_mark_record,"
      " outcome_mark, outcome_mark_record, fingerprint, state"
      " FROM health_snapshots ORDER BY id");
  if (!select.ok()) return select.status();
  SqliteStatement& s = **select;
  std::vector<WindowSnapshot> out;
  for (;;) {
    absl::StatusOr<bool> row = s.Step();
    if (!row.ok()) return row.status();
    if (!*row) break;
    WindowSnapshot& w = out.emplace_back();
    w.set_name = s.ColumnText(0);
    w.version = s.ColumnText(1);
    w.taken_at = absl::FromUnixMicros(s.ColumnInt64(2));
    w.marks = LedgerMarks{s.ColumnInt64(3), s.ColumnInt64(5)};
    w.mark_records = MarkRecords{s.ColumnText(4), s.ColumnText(6)};
    w.fingerprint = s.ColumnText(7);
    w.state = s.ColumnText(8);
  }
  return out;
}

}  // namespace plumbline::daemon
