// File: daemon/ledger/reads.cc
// The read side of the ledger (Ledger::ForEachLabelled, ForEachScore): each
// call opens its own connection, so reads never wait for or hold up the
// writer thread (WAL mode: readers see the last committed state).
#include <cstdint>

#include "daemon/ledger/entries.h"
#include "daemon/ledger/ledger.h"

namespace plumbline::daemon {
namespace {

int64_t Micros(absl::Time t) { return absl::ToUnixMicros(t); }
absl::Time FromMicros(int64_t us) { return absl::FromUnixMicros(us); }

// Opens a read connection, binds (set name, since, limit) to ?1..?3 of `sql`
// and calls `row` for each result row.
absl::Status ReadRows(const std::string& path, LedgerEnv* env,
                      absl::string_view sql, const std::string& set_name,
                      int64_t limit, absl::Time since,
                      const std::function<void(const SqliteStatement&)>& row) {
  auto db = SqliteDb::Open(path, env);
  if (!db.ok()) return db.status();
  auto q = (*db)->Prepare(sql);
  if (!q.ok()) return q.status();
  SqliteStatement& s = **q;
  s.BindText(1, set_name);
  s.BindInt64(2, since == absl::InfinitePast() ? INT64_MIN : Micros(since));
  s.BindInt64(3, limit);
  for (;;) {
    auto more = s.Step();
    if (!more.ok()) return more.status();
    if (!*more) return absl::OkStatus();
    row(s);
  }
}

}  // namespace

absl::Status Ledger::ForEachLabelled(
    const std::string& set_name, int64_t limit, absl::Time since,
    const std::function<void(const LabelledScore&)>& fn) {
  return ReadRows(
      options_.path, env_,
      "SELECT s.record_id, ss.set_name, ss.set_version, ss.role, s.log_odds,"
      " s.probability, o.label, s.scored_at_us, o.observed_at_us, s.features"
      " FROM outcomes o JOIN scores s ON s.record_id = o.record_id"
      " JOIN score_sets ss ON ss.id = s.set_id"
      " WHERE ss.set_name = ?1 AND o.observed_at_us >= ?2"
      // As the outcome lookup: not the repeats schemas before 5 let in.
      " AND (s.primary_set IS NOT NULL OR ss.role = 'shadow')"
      " ORDER BY o.observed_at_us DESC, s.id DESC LIMIT ?3",
      set_name, limit, since, [&fn](const SqliteStatement& s) {
        fn(LabelledScore{s.ColumnText(0), s.ColumnText(1), s.ColumnText(2),
                         RoleColumn(s.ColumnText(3)), s.ColumnDouble(4),
                         s.ColumnDouble(5), static_cast<int>(s.ColumnInt64(6)),
                         FromMicros(s.ColumnInt64(7)),
                         FromMicros(s.ColumnInt64(8)), s.ColumnText(9)});
      });
}

absl::Status Ledger::ForEachScore(
    const std::string& set_name, int64_t limit, absl::Time since,
    const std::function<void(const ScoreEntry&)>& fn) {
  return ReadRows(
      options_.path, env_,
      // Newest id first, stopping at the limit (schema 4 has no index by set
      // and time); CROSS JOIN keeps scores the outer loop so the planner
      // cannot choose a scan of the whole set followed by a sort.
      "SELECT s.record_id, ss.set_name, ss.set_version, ss.role, "
      "s.scored_at_us,"
      " s.log_odds, s.probability, s.features FROM scores s"
      " CROSS JOIN score_sets ss ON ss.id = s.set_id"
      " WHERE ss.set_name = ?1 AND s.scored_at_us >= ?2"
      " ORDER BY s.id DESC LIMIT ?3",
      set_name, limit, since, [&fn](const SqliteStatement& s) {
        fn(ScoreEntry{s.ColumnText(0), s.ColumnText(1), s.ColumnText(2),
                      RoleColumn(s.ColumnText(3)), FromMicros(s.ColumnInt64(4)),
                      s.ColumnDouble(5), s.ColumnDouble(6), s.ColumnText(7)});
      });
}

}  // namespace plumbline::daemon
