// File: daemon/ledger/reads.cc
// The read side of the ledger (SqliteLedger::ReadLabelled, ReadScores): each
// call opens its own connection, so reads never wait for or hold up the
// writer thread (WAL mode: readers see the last committed state).
#include <cstdint>
#include <functional>
#include <string>

#include "absl/strings/str_cat.h"
#include "daemon/ledger/entries.h"
#include "daemon/ledger/sqlite_ledger.h"
#include "daemon/util/caller_text.h"
#include "google/protobuf/util/json_util.h"

namespace plumbline::daemon {
namespace {

int64_t Micros(absl::Time t) { return absl::ToUnixMicros(t); }
absl::Time FromMicros(int64_t us) { return absl::FromUnixMicros(us); }

// Opens a read connection, prepares `sql`, lets `bind` bind its parameters
// and calls `row` for each result row.
absl::Status ReadRows(const std::string& path, LedgerEnv* env,
                      absl::string_view sql,
                      const std::function<void(SqliteStatement&)>& bind,
                      const std::function<void(const SqliteStatement&)>& row) {
  auto db = SqliteDb::Open(path, env);
  if (!db.ok()) return db.status();
  auto q = (*db)->Prepare(sql);
  if (!q.ok()) return q.status();
  SqliteStatement& s = **q;
  bind(s);
  for (;;) {
    auto more = s.Step();
    if (!more.ok()) return more.status();
    if (!*more) return absl::OkStatus();
    row(s);
  }
}

// Binds (set name, since, limit, upto) to ?1..?4: the windowed reads.
std::function<void(SqliteStatement&)> BindWindow(const std::string& set_name,
                                                 int64_t limit,
                                                 absl::Time since,
                                                 int64_t upto) {
  return [&set_name, limit, since, upto](SqliteStatement& s) {
    s.BindText(1, set_name);
    s.BindInt64(2, since == absl::InfinitePast() ? INT64_MIN : Micros(since));
    s.BindInt64(3, limit);
    s.BindInt64(4, upto);
  };
}

// Binds (after, upto) to ?1, ?2: the reads of a ledger's tail.
std::function<void(SqliteStatement&)> BindRange(int64_t after, int64_t upto) {
  return [after, upto](SqliteStatement& s) {
    s.BindInt64(1, after);
    s.BindInt64(2, upto);
  };
}

// The columns ScoreFromRow and LabelledFromRow read, in their order.
constexpr char kScoreColumns[] =
    "s.record_id, ss.set_name, ss.set_version, ss.role, s.scored_at_us,"
    " s.log_odds, s.probability, s.features, ss.id, ss.layout";
constexpr char kLabelledColumns[] =
    "s.record_id, ss.set_name, ss.set_version, ss.role, s.log_odds,"
    " s.probability, o.label, s.scored_at_us, o.observed_at_us, s.features,"
    " ss.id, ss.layout";

}  // namespace

std::shared_ptr<const v1::RowLayout> SqliteLedger::StoredLayout(
    int64_t set_id, absl::string_view json) {
  if (json.empty()) return nullptr;
  absl::MutexLock lock(&layouts_mu_);
  auto it = layouts_.find(set_id);
  if (it != layouts_.end()) return it->second;
  auto layout = std::make_shared<v1::RowLayout>();
  google::protobuf::util::JsonParseOptions strict;
  strict.ignore_unknown_fields = false;
  if (!google::protobuf::util::JsonStringToMessage(
           google::protobuf::StringPiece(json.data(), json.size()),
           layout.get(), strict)
           .ok()) {
    // A layout that does not parse: its rows read as undecodable (readers
    // count them as unusable) rather than as some other version's.
    return nullptr;
  }
  return layouts_.emplace(set_id, std::move(layout)).first->second;
}

ScoreEntry SqliteLedger::ScoreFromRow(const SqliteStatement& s) {
  return ScoreEntry{s.ColumnText(0),
                    s.ColumnText(1),
                    s.ColumnText(2),
                    RoleColumn(s.ColumnText(3)),
                    FromMicros(s.ColumnInt64(4)),
                    s.ColumnDouble(5),
                    s.ColumnDouble(6),
                    s.ColumnText(7),
                    StoredLayout(s.ColumnInt64(8), s.ColumnText(9))};
}

LabelledScore SqliteLedger::LabelledFromRow(const SqliteStatement& s) {
  return LabelledScore{s.ColumnText(0),
                       s.ColumnText(1),
                       s.ColumnText(2),
                       RoleColumn(s.ColumnText(3)),
                       s.ColumnDouble(4),
                       s.ColumnDouble(5),
                       static_cast<int>(s.ColumnInt64(6)),
                       FromMicros(s.ColumnInt64(7)),
                       FromMicros(s.ColumnInt64(8)),
                       s.ColumnText(9),
                       StoredLayout(s.ColumnInt64(10), s.ColumnText(11))};
}

absl::Status SqliteLedger::ReadLabelled(
    const std::string& set_name, int64_t limit, absl::Time since,
    const std::function<void(const LabelledScore&)>& fn,
    const LedgerMarks* upto) {
  return ReadRows(
      options_.path, env_,
      absl::StrCat(
          "SELECT ", kLabelledColumns,
          " FROM outcomes o JOIN scores s ON s.record_id = o.record_id"
          " JOIN score_sets ss ON ss.id = s.set_id"
          " WHERE ss.set_name = ?1 AND o.observed_at_us >= ?2"
          // As the outcome lookup: not the repeats schemas before 5 let in.
          " AND (s.primary_set IS NOT NULL OR ss.role = 'shadow')"
          " AND (o.seq IS NULL OR o.seq <= ?4)"
          " ORDER BY o.observed_at_us DESC, s.id DESC LIMIT ?3"),
      BindWindow(set_name, limit, since,
                 upto != nullptr ? upto->outcome_seq : INT64_MAX),
      [&](const SqliteStatement& s) { fn(LabelledFromRow(s)); });
}

absl::Status SqliteLedger::ReadScores(
    const std::string& set_name, int64_t limit, absl::Time since,
    const std::function<void(const ScoreEntry&)>& fn, const LedgerMarks* upto) {
  return ReadRows(
      options_.path, env_,
      // Newest id first, stopping at the limit (schema 4 has no index by set
      // and time); CROSS JOIN keeps scores the outer loop so the planner
      // cannot choose a scan of the whole set followed by a sort.
      absl::StrCat("SELECT ", kScoreColumns,
                   " FROM scores s CROSS JOIN score_sets ss ON ss.id = s.set_id"
                   " WHERE ss.set_name = ?1 AND s.scored_at_us >= ?2"
                   " AND s.id <= ?4 ORDER BY s.id DESC LIMIT ?3"),
      BindWindow(set_name, limit, since,
                 upto != nullptr ? upto->score_id : INT64_MAX),
      [&](const SqliteStatement& s) { fn(ScoreFromRow(s)); });
}

absl::Status SqliteLedger::ReadScoresAfter(
    int64_t after_id, const std::function<void(const ScoreEntry&)>& fn,
    int64_t upto_id) {
  return ReadRows(
      options_.path, env_,
      absl::StrCat("SELECT ", kScoreColumns,
                   " FROM scores s CROSS JOIN score_sets ss ON ss.id = s.set_id"
                   " WHERE s.id > ?1 AND s.id <= ?2 ORDER BY s.id"),
      BindRange(after_id, upto_id),
      [&](const SqliteStatement& s) { fn(ScoreFromRow(s)); });
}

absl::Status SqliteLedger::ReadLabelledAfter(
    int64_t after_seq, const std::function<void(const LabelledScore&)>& fn,
    int64_t upto_seq) {
  return ReadRows(
      options_.path, env_,
      // As the writer's lookup found them when the outcome came: the
      // record's stored scores, not the repeats schemas before 5 let in.
      absl::StrCat(
          "SELECT ", kLabelledColumns,
          " FROM outcomes o CROSS JOIN scores s ON s.record_id = o.record_id"
          " JOIN score_sets ss ON ss.id = s.set_id"
          " WHERE o.seq > ?1 AND o.seq <= ?2"
          " AND (s.primary_set IS NOT NULL OR ss.role = 'shadow')"
          " ORDER BY o.seq, s.id"),
      BindRange(after_seq, upto_seq),
      [&](const SqliteStatement& s) { fn(LabelledFromRow(s)); });
}

absl::StatusOr<MarkRecords> SqliteLedger::RecordsAt(const LedgerMarks& marks) {
  auto db = SqliteDb::Open(options_.path, env_);
  if (!db.ok()) return db.status();
  MarkRecords records;
  struct {
    const char* sql;
    int64_t mark;
    std::string* out;
  } reads[] = {
      {"SELECT record_id FROM scores WHERE id = ?1", marks.score_id,
       &records.score_record},
      {"SELECT record_id FROM outcomes WHERE seq = ?1", marks.outcome_seq,
       &records.outcome_record},
  };
  for (const auto& r : reads) {
    auto q = (*db)->Prepare(r.sql);
    if (!q.ok()) return q.status();
    (*q)->BindInt64(1, r.mark);
    auto row = (*q)->Step();
    if (!row.ok()) return row.status();
    if (*row) *r.out = (*q)->ColumnText(0);
  }
  return records;
}

absl::StatusOr<StoredRecord> SqliteLedger::FindRecord(
    const std::string& set_name, const std::string& record_id) {
  auto db = SqliteDb::Open(options_.path, env_);
  if (!db.ok()) return db.status();
  StoredRecord record;
  {
    // scores_by_record(record_id, primary_set) finds the id's rows.
    auto q = (*db)->Prepare(
        "SELECT ss.set_version, ss.role, s.scored_at_us, s.log_odds,"
        " s.probability, s.features, ss.id, ss.layout FROM scores s"
        " JOIN score_sets ss ON ss.id = s.set_id"
        " WHERE s.record_id = ?1 AND ss.set_name = ?2 ORDER BY s.id");
    if (!q.ok()) return q.status();
    SqliteStatement& s = **q;
    s.BindText(1, record_id);
    s.BindText(2, set_name);
    for (;;) {
      auto more = s.Step();
      if (!more.ok()) return more.status();
      if (!*more) break;
      record.scores.push_back(ScoreEntry{
          record_id, set_name, s.ColumnText(0), RoleColumn(s.ColumnText(1)),
          FromMicros(s.ColumnInt64(2)), s.ColumnDouble(3), s.ColumnDouble(4),
          s.ColumnText(5), StoredLayout(s.ColumnInt64(6), s.ColumnText(7))});
    }
  }
  if (record.scores.empty()) {
    return absl::NotFoundError(
        absl::StrCat("set '", set_name, "' has no score with record id '",
                     CallerText(record_id), "' in the ledger"));
  }
  auto q = (*db)->Prepare(
      "SELECT label, observed_at_us, reported_at_us FROM outcomes"
      " WHERE record_id = ?1");
  if (!q.ok()) return q.status();
  (*q)->BindText(1, record_id);
  auto row = (*q)->Step();
  if (!row.ok()) return row.status();
  if (*row) {
    record.has_outcome = true;
    record.label = static_cast<int>((*q)->ColumnInt64(0));
    record.observed_at = FromMicros((*q)->ColumnInt64(1));
    record.reported_at = FromMicros((*q)->ColumnInt64(2));
  }
  return record;
}

}  // namespace plumbline::daemon
