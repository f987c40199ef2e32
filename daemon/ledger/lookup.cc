// File: daemon/ledger/lookup.cc
#include "daemon/ledger/lookup.h"

#include <algorithm>
#include <utility>

#include "daemon/ledger/entries.h"
#include "daemon/util/json_text.h"

namespace plumbline::daemon {

const char kFindScoresSql[] =
    "SELECT ss.set_name, ss.set_version, ss.role, s.log_odds, s.probability,"
    " s.scored_at_us FROM scores s JOIN score_sets ss ON ss.id = s.set_id"
    " WHERE s.record_id = ?1"
    // The record's score of each set and their shadows; not the repeats
    // schemas before 5 let in (kept, primary_set NULL, role active).
    " AND (s.primary_set IS NOT NULL OR ss.role = 'shadow') ORDER BY s.id";

namespace {

// Idle read connections kept for the next caller; more callers at once open
// more and close the extra ones when done.
constexpr size_t kIdleReaders = 8;
// A lookup gives up waiting for a lock after this long and leaves the job to
// the writer (SQLite's busy handler; readers of a WAL database rarely wait).
constexpr int kReaderBusyMillis = 50;

}  // namespace

absl::StatusOr<bool> FindScores(SqliteStatement& find,
                                const std::string& record_id, int label,
                                std::vector<LabelledScore>& out) {
  find.BindTextNoCopy(1, record_id);
  bool any = false;
  for (;;) {
    absl::StatusOr<bool> row = find.Step();
    if (!row.ok()) {
      find.Reset();
      return row.status();
    }
    if (!*row) break;
    any = true;
    LabelledScore& l = out.emplace_back();
    l.record_id = record_id;
    l.set_name = find.ColumnText(0);
    l.set_version = find.ColumnText(1);
    l.role = RoleColumn(find.ColumnText(2));
    l.log_odds = find.ColumnDouble(3);
    l.probability = find.ColumnDouble(4);
    l.label = label;
    l.scored_at = absl::FromUnixMicros(find.ColumnInt64(5));
  }
  find.Reset();
  return any;
}

struct ScoreLookup::Reader {
  std::unique_ptr<SqliteDb> db;
  std::unique_ptr<SqliteStatement> begin, find, sets, end;
};

ScoreLookup::ScoreLookup(std::string path, LedgerEnv* env)
    : path_(std::move(path)), env_(env) {}
ScoreLookup::~ScoreLookup() = default;

absl::StatusOr<std::unique_ptr<ScoreLookup::Reader>> ScoreLookup::Acquire() {
  {
    absl::MutexLock lock(&mu_);
    if (!idle_.empty()) {
      std::unique_ptr<Reader> r = std::move(idle_.back());
      idle_.pop_back();
      return r;
    }
  }
  auto r = std::make_unique<Reader>();
  auto db = SqliteDb::Open(path_, env_);
  if (!db.ok()) return db.status();
  r->db = *std::move(db);
  sqlite3_busy_timeout(r->db->handle(), kReaderBusyMillis);
  struct {
    std::unique_ptr<SqliteStatement>* out;
    const char* sql;
  } prepared[] = {
      {&r->begin, "BEGIN"},
      // Every score of every record id in the JSON array ?1 (key: the
      // position in the array), in one statement: a statement per id costs
      // about twice as much per lookup. CROSS JOIN keeps the array the outer
      // loop, each id one search of scores_by_record.
      {&r->find,
       "SELECT j.key, s.id, s.set_id, s.log_odds, s.probability,"
       " s.scored_at_us, s.primary_set IS NOT NULL FROM json_each(?1) j"
       " CROSS JOIN scores s ON s.record_id = j.value"},
      {&r->sets, "SELECT id, set_name, set_version, role FROM score_sets"},
      {&r->end, "COMMIT"},
  };
  for (auto& p : prepared) {
    auto stmt = r->db->Prepare(p.sql);
    if (!stmt.ok()) return stmt.status();
    *p.out = *std::move(stmt);
  }
  return r;
}

void ScoreLookup::Release(std::unique_ptr<Reader> reader) {
  absl::MutexLock lock(&mu_);
  if (idle_.size() < kIdleReaders) idle_.push_back(std::move(reader));
}

absl::Status ScoreLookup::LoadSets(Reader& r) {
  absl::flat_hash_map<int64_t, SetNames> sets;
  for (;;) {
    absl::StatusOr<bool> row = r.sets->Step();
    if (!row.ok()) {
      r.sets->Reset();
      return row.status();
    }
    if (!*row) break;
    sets[r.sets->ColumnInt64(0)] =
        SetNames{r.sets->ColumnText(1), r.sets->ColumnText(2),
                 RoleColumn(r.sets->ColumnText(3))};
  }
  r.sets->Reset();
  absl::MutexLock lock(&mu_);
  sets_ = std::move(sets);
  return absl::OkStatus();
}

absl::Status ScoreLookup::Find(const std::vector<OutcomeEntry>& outcomes,
                               const std::vector<uint8_t>& wanted,
                               std::vector<OutcomeResult>& results,
                               std::vector<uint8_t>& found) {
  // The ids as a JSON array; at[k] is the outcome of its k-th element.
  std::string ids = "[";
  std::vector<size_t> at;
  for (size_t i = 0; i < outcomes.size(); ++i) {
    if (!wanted[i]) continue;
    if (!at.empty()) ids.push_back(',');
    AppendJsonString(outcomes[i].record_id, &ids);
    at.push_back(i);
  }
  ids.push_back(']');
  if (at.empty()) return absl::OkStatus();

  absl::StatusOr<std::unique_ptr<Reader>> reader = Acquire();
  if (!reader.ok()) return reader.status();
  Reader& r = **reader;
  struct Row {
    size_t outcome;
    int64_t id, set_id;
    double log_odds, probability;
    int64_t scored_at_us;
    bool primary;
  };
  std::vector<Row> rows;
  rows.reserve(at.size());
  // One read transaction: one snapshot for the batch and for the set
  // names, and the connection's page cache (emptied whenever another
  // connection has committed) serves every search of the batch.
  absl::Status st = r.begin->Run();
  if (st.ok()) {
    r.find->BindTextNoCopy(1, ids);
    for (;;) {
      absl::StatusOr<bool> row = r.find->Step();
      if (!row.ok()) {
        st = row.status();
        break;
      }
      if (!*row) break;
      const int64_t k = r.find->ColumnInt64(0);
      if (k < 0 || static_cast<size_t>(k) >= at.size()) continue;
      rows.push_back(Row{at[static_cast<size_t>(k)], r.find->ColumnInt64(1),
                         r.find->ColumnInt64(2), r.find->ColumnDouble(3),
                         r.find->ColumnDouble(4), r.find->ColumnInt64(5),
                         r.find->ColumnInt64(6) != 0});
    }
    r.find->Reset();
  }
  // Set names: from the cache, reloaded when a set is new to it.
  bool known = true;
  if (st.ok()) {
    absl::MutexLock lock(&mu_);
    for (const Row& row : rows) known = known && sets_.contains(row.set_id);
  }
  if (st.ok() && !known) st = LoadSets(r);
  if (absl::Status end = r.end->Run(); st.ok()) st = end;
  if (!st.ok()) return st;  // the connection is dropped, as it may be unusable
  Release(*std::move(reader));

  // Rows of one record in id order (the order FindScores gives).
  std::stable_sort(rows.begin(), rows.end(), [](const Row& a, const Row& b) {
    return a.outcome != b.outcome ? a.outcome < b.outcome : a.id < b.id;
  });
  absl::MutexLock lock(&mu_);
  for (const Row& row : rows) {
    auto names = sets_.find(row.set_id);
    if (names == sets_.end()) continue;  // cannot happen: loaded above
    // As kFindScoresSql: not the repeats schemas before 5 let in.
    if (!row.primary && names->second.role != ScoreRole::kShadow) continue;
    const OutcomeEntry& o = outcomes[row.outcome];
    LabelledScore& l = results[row.outcome].labelled.emplace_back();
    l.record_id = o.record_id;
    l.set_name = names->second.name;
    l.set_version = names->second.version;
    l.role = names->second.role;
    l.log_odds = row.log_odds;
    l.probability = row.probability;
    l.label = o.label;
    l.scored_at = absl::FromUnixMicros(row.scored_at_us);
    found[row.outcome] = 1;
  }
  return absl::OkStatus();
}

}  // namespace plumbline::daemon
