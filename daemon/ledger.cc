#include "daemon/ledger.h"

#include <filesystem>
#include <utility>

#include "absl/strings/str_cat.h"
#include "absl/synchronization/notification.h"
#include "daemon/ledger_schema.h"

namespace plumbline::daemon {

struct Ledger::Job {
  std::vector<ScoreEntry> scores;
  std::vector<OutcomeEntry> outcomes;
  std::vector<OutcomeResult> results;
  absl::Status status;
  absl::Notification done;
  size_t rows() const { return scores.size() + outcomes.size(); }
};

struct Ledger::Statements {
  std::unique_ptr<SqliteStatement> insert_score;
  std::unique_ptr<SqliteStatement> find_outcome;
  std::unique_ptr<SqliteStatement> find_scores;
  std::unique_ptr<SqliteStatement> insert_outcome;
  std::unique_ptr<SqliteStatement> begin;
  std::unique_ptr<SqliteStatement> commit;
  std::unique_ptr<SqliteStatement> rollback;
};

namespace {

int64_t Micros(absl::Time t) { return absl::ToUnixMicros(t); }
absl::Time FromMicros(int64_t us) { return absl::FromUnixMicros(us); }

}  // namespace

int Ledger::SchemaVersion() { return LatestLedgerSchemaVersion(); }

Ledger::Ledger(LedgerOptions options) : options_(std::move(options)) {}

absl::StatusOr<std::unique_ptr<Ledger>> Ledger::Open(LedgerOptions options) {
  const std::filesystem::path dir =
      std::filesystem::path(options.path).parent_path();
  if (!dir.empty()) {
    std::error_code ec;
    std::filesystem::create_directories(dir, ec);
    if (ec) {
      return absl::UnavailableError(absl::StrCat(
          "ledger ", options.path, ": cannot create directory ", dir.string(),
          ": ", ec.message()));
    }
  }
  std::unique_ptr<Ledger> ledger(new Ledger(std::move(options)));
  auto db = SqliteDb::Open(ledger->options_.path);
  if (!db.ok()) return db.status();
  ledger->writer_db_ = *std::move(db);
  SqliteDb& w = *ledger->writer_db_;
  if (absl::Status st = w.Exec("PRAGMA journal_mode=WAL"); !st.ok()) return st;
  if (absl::Status st = w.Exec(ledger->options_.durable_commits
                                   ? "PRAGMA synchronous=FULL"
                                   : "PRAGMA synchronous=NORMAL");
      !st.ok()) {
    return st;
  }
  if (absl::Status st = MigrateLedger(w); !st.ok()) return st;

  auto s = std::make_unique<Statements>();
  struct {
    std::unique_ptr<SqliteStatement>* out;
    const char* sql;
  } prepared[] = {
      {&s->insert_score,
       "INSERT INTO scores(record_id, set_name, set_version, role, scored_at_us,"
       " log_odds, probability, features) VALUES (?1,?2,?3,?4,?5,?6,?7,?8)"},
      {&s->find_outcome, "SELECT label FROM outcomes WHERE record_id = ?1"},
      {&s->find_scores,
       "SELECT set_name, set_version, role, log_odds, probability, scored_at_us,"
       " features FROM scores WHERE record_id = ?1 ORDER BY id"},
      {&s->insert_outcome,
       "INSERT INTO outcomes(record_id, label, observed_at_us, reported_at_us)"
       " VALUES (?1,?2,?3,?4)"},
      {&s->begin, "BEGIN IMMEDIATE"},
      {&s->commit, "COMMIT"},
      {&s->rollback, "ROLLBACK"},
  };
  for (auto& p : prepared) {
    auto stmt = w.Prepare(p.sql);
    if (!stmt.ok()) return stmt.status();
    *p.out = *std::move(stmt);
  }
  ledger->stmts_ = std::move(s);
  ledger->writer_ = std::thread([l = ledger.get()] { l->WriterLoop(); });
  return ledger;
}

Ledger::~Ledger() {
  {
    absl::MutexLock lock(&mu_);
    stopping_ = true;
  }
  if (writer_.joinable()) writer_.join();
}

void Ledger::set_commit_observer(std::function<void(absl::Duration, size_t)> fn) {
  absl::MutexLock lock(&mu_);
  commit_observer_ = std::move(fn);
}

LedgerStats Ledger::stats() const {
  absl::MutexLock lock(&mu_);
  LedgerStats s = stats_;
  s.queued_rows = queued_rows_;
  return s;
}

absl::Status Ledger::Enqueue(const std::shared_ptr<Job>& job) {
  absl::MutexLock lock(&mu_);
  if (stopping_) return absl::UnavailableError("ledger is shutting down");
  const auto rows = static_cast<int64_t>(job->rows());
  if (queued_rows_ + rows > static_cast<int64_t>(options_.queue_capacity_rows)) {
    return absl::ResourceExhaustedError(absl::StrCat(
        "ledger write queue is full (", queued_rows_, " rows waiting, capacity ",
        options_.queue_capacity_rows, "); retry with backoff"));
  }
  queued_rows_ += rows;
  queue_.push_back(job);
  return absl::OkStatus();
}

absl::Status Ledger::AppendScores(std::vector<ScoreEntry> scores) {
  if (scores.empty()) return absl::OkStatus();
  auto job = std::make_shared<Job>();
  job->scores = std::move(scores);
  if (absl::Status st = Enqueue(job); !st.ok()) return st;
  if (options_.ack == LedgerOptions::Ack::kQueued) return absl::OkStatus();
  job->done.WaitForNotification();
  return job->status;
}

absl::StatusOr<std::vector<OutcomeResult>> Ledger::ReportOutcomes(
    std::vector<OutcomeEntry> outcomes) {
  auto job = std::make_shared<Job>();
  job->outcomes = std::move(outcomes);
  job->results.resize(job->outcomes.size());
  if (job->outcomes.empty()) return std::move(job->results);
  if (absl::Status st = Enqueue(job); !st.ok()) return st;
  job->done.WaitForNotification();
  if (!job->status.ok()) return job->status;
  return std::move(job->results);
}

void Ledger::WriterLoop() {
  for (;;) {
    std::vector<std::shared_ptr<Job>> group;
    {
      absl::MutexLock lock(&mu_);
      mu_.Await(absl::Condition(
          +[](Ledger* l) ABSL_EXCLUSIVE_LOCKS_REQUIRED(l->mu_) {
            return !l->queue_.empty() || l->stopping_;
          },
          this));
      if (queue_.empty()) return;  // stopping and drained
      size_t rows = 0;
      while (!queue_.empty() &&
             (group.empty() || rows + queue_.front()->rows() <= options_.max_group_rows)) {
        rows += queue_.front()->rows();
        group.push_back(std::move(queue_.front()));
        queue_.pop_front();
      }
    }
    const absl::Time start = absl::Now();
    absl::Status st = RunGroup(group);
    const absl::Duration latency = absl::Now() - start;
    size_t rows = 0;
    for (const auto& job : group) rows += job->rows();
    std::function<void(absl::Duration, size_t)> observer;
    {
      absl::MutexLock lock(&mu_);
      queued_rows_ -= static_cast<int64_t>(rows);
      if (st.ok()) {
        ++stats_.committed_transactions;
        stats_.committed_rows += static_cast<int64_t>(rows);
        stats_.last_commit_latency = latency;
      }
      observer = commit_observer_;
    }
    if (st.ok() && observer) observer(latency, rows);
    for (const auto& job : group) {
      job->status = st;
      job->done.Notify();
    }
    if (st.ok() && options_.now() - last_retention_ >= options_.retention_interval) {
      last_retention_ = options_.now();
      // Retention failing leaves extra rows, never loses acknowledged ones;
      // the next interval tries again.
      ApplyRetention().IgnoreError();
    }
  }
}

absl::Status Ledger::RunGroup(std::vector<std::shared_ptr<Job>>& group) {
  Statements& s = *stmts_;
  if (absl::Status st = s.begin->Run(); !st.ok()) return st;
  absl::Status st;
  for (auto& job : group) {
    for (const ScoreEntry& e : job->scores) {
      SqliteStatement& ins = *s.insert_score;
      ins.BindText(1, e.record_id);
      ins.BindText(2, e.set_name);
      ins.BindText(3, e.set_version);
      ins.BindText(4, e.role);
      ins.BindInt64(5, Micros(e.scored_at));
      ins.BindDouble(6, e.log_odds);
      ins.BindDouble(7, e.probability);
      ins.BindText(8, e.features_json);
      st = ins.Run();
      if (!st.ok()) break;
    }
    for (size_t i = 0; st.ok() && i < job->outcomes.size(); ++i) {
      job->results[i] = OutcomeResult{};
      st = WriteOutcome(job->outcomes[i], job->results[i]);
    }
    if (!st.ok()) break;
  }
  if (st.ok()) st = s.commit->Run();
  if (!st.ok()) {
    s.rollback->Run().IgnoreError();  // the original error is what matters
    for (auto& job : group) {
      for (auto& r : job->results) r = OutcomeResult{};
    }
  }
  return st;
}

absl::Status Ledger::WriteOutcome(const OutcomeEntry& o, OutcomeResult& result) {
  Statements& s = *stmts_;
  if (o.record_id.empty()) {
    result.status = absl::InvalidArgumentError("record_id must not be empty");
    return absl::OkStatus();
  }
  if (o.label != 0 && o.label != 1) {
    result.status = absl::InvalidArgumentError(absl::StrCat(
        "record '", o.record_id, "': label must be 0 or 1, got ", o.label));
    return absl::OkStatus();
  }
  s.find_outcome->BindText(1, o.record_id);
  auto found = s.find_outcome->Step();
  const int64_t existing = found.ok() && *found ? s.find_outcome->ColumnInt64(0) : -1;
  s.find_outcome->Reset();
  if (!found.ok()) return found.status();
  if (existing >= 0) {
    if (existing == o.label) {
      result.repeat = true;
    } else {
      result.status = absl::FailedPreconditionError(absl::StrCat(
          "record '", o.record_id, "' already has outcome ", existing,
          "; a different label (", o.label, ") is refused"));
    }
    return absl::OkStatus();
  }
  const absl::Time now = options_.now();
  const absl::Time observed = o.observed_at == absl::InfinitePast() ? now : o.observed_at;
  s.find_scores->BindText(1, o.record_id);
  for (;;) {
    auto row = s.find_scores->Step();
    if (!row.ok()) {
      s.find_scores->Reset();
      return row.status();
    }
    if (!*row) break;
    const SqliteStatement& q = *s.find_scores;
    result.labelled.push_back(LabelledScore{
        o.record_id, q.ColumnText(0), q.ColumnText(1), q.ColumnText(2),
        q.ColumnDouble(3), q.ColumnDouble(4), o.label,
        FromMicros(q.ColumnInt64(5)), observed, q.ColumnText(6)});
  }
  s.find_scores->Reset();
  if (result.labelled.empty()) {
    result.status = absl::NotFoundError(absl::StrCat(
        "no score with record_id '", o.record_id, "' is in the ledger"));
    return absl::OkStatus();
  }
  s.insert_outcome->BindText(1, o.record_id);
  s.insert_outcome->BindInt64(2, o.label);
  s.insert_outcome->BindInt64(3, Micros(observed));
  s.insert_outcome->BindInt64(4, Micros(now));
  return s.insert_outcome->Run();
}

absl::Status Ledger::ApplyRetention() {
  SqliteDb& w = *writer_db_;
  if (options_.retention_age != absl::InfiniteDuration()) {
    const int64_t cutoff = Micros(options_.now() - options_.retention_age);
    if (absl::Status st = w.Exec(absl::StrCat(
            "BEGIN IMMEDIATE;"
            "DELETE FROM outcomes WHERE record_id IN (SELECT record_id FROM scores"
            " WHERE scored_at_us < ", cutoff, ");"
            "DELETE FROM scores WHERE scored_at_us < ", cutoff, ";COMMIT"));
        !st.ok()) {
      w.Exec("ROLLBACK").IgnoreError();
      return st;
    }
  }
  if (options_.retention_rows > 0) {
    const std::string keep_from = absl::StrCat(
        "(SELECT COALESCE(MAX(id), 0) - ", options_.retention_rows, " FROM scores)");
    if (absl::Status st = w.Exec(absl::StrCat(
            "BEGIN IMMEDIATE;"
            "DELETE FROM outcomes WHERE record_id IN (SELECT record_id FROM scores"
            " WHERE id <= ", keep_from, ");"
            "DELETE FROM scores WHERE id <= ", keep_from, ";COMMIT"));
        !st.ok()) {
      w.Exec("ROLLBACK").IgnoreError();
      return st;
    }
  }
  return absl::OkStatus();
}

absl::Status Ledger::ForEachLabelled(
    const std::string& set_name, int64_t limit, absl::Time since,
    const std::function<void(const LabelledScore&)>& fn) {
  auto db = SqliteDb::Open(options_.path);
  if (!db.ok()) return db.status();
  auto q = (*db)->Prepare(
      "SELECT s.record_id, s.set_name, s.set_version, s.role, s.log_odds,"
      " s.probability, o.label, s.scored_at_us, o.observed_at_us, s.features"
      " FROM outcomes o JOIN scores s ON s.record_id = o.record_id"
      " WHERE s.set_name = ?1 AND o.observed_at_us >= ?2"
      " ORDER BY o.observed_at_us DESC, s.id DESC LIMIT ?3");
  if (!q.ok()) return q.status();
  SqliteStatement& s = **q;
  s.BindText(1, set_name);
  s.BindInt64(2, since == absl::InfinitePast() ? INT64_MIN : Micros(since));
  s.BindInt64(3, limit);
  for (;;) {
    auto row = s.Step();
    if (!row.ok()) return row.status();
    if (!*row) break;
    fn(LabelledScore{s.ColumnText(0), s.ColumnText(1), s.ColumnText(2),
                     s.ColumnText(3), s.ColumnDouble(4), s.ColumnDouble(5),
                     static_cast<int>(s.ColumnInt64(6)), FromMicros(s.ColumnInt64(7)),
                     FromMicros(s.ColumnInt64(8)), s.ColumnText(9)});
  }
  return absl::OkStatus();
}

absl::Status Ledger::ForEachScore(const std::string& set_name, int64_t limit,
                                  absl::Time since,
                                  const std::function<void(const ScoreEntry&)>& fn) {
  auto db = SqliteDb::Open(options_.path);
  if (!db.ok()) return db.status();
  auto q = (*db)->Prepare(
      "SELECT record_id, set_name, set_version, role, scored_at_us, log_odds,"
      " probability, features FROM scores"
      " WHERE set_name = ?1 AND scored_at_us >= ?2 ORDER BY id DESC LIMIT ?3");
  if (!q.ok()) return q.status();
  SqliteStatement& s = **q;
  s.BindText(1, set_name);
  s.BindInt64(2, since == absl::InfinitePast() ? INT64_MIN : Micros(since));
  s.BindInt64(3, limit);
  for (;;) {
    auto row = s.Step();
    if (!row.ok()) return row.status();
    if (!*row) break;
    fn(ScoreEntry{s.ColumnText(0), s.ColumnText(1), s.ColumnText(2), s.ColumnText(3),
                  FromMicros(s.ColumnInt64(4)), s.ColumnDouble(5), s.ColumnDouble(6),
                  s.ColumnText(7)});
  }
  return absl::OkStatus();
}

}  // namespace plumbline::daemon
