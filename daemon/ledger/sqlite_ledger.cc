// File: daemon/ledger/ledger.cc
// The write side of the ledger: open and migrate, the writer thread, group
// commit, outcomes and retention. The read side is in ledger_reads.cc.
#include "daemon/ledger/sqlite_ledger.h"

#include <sys/stat.h>

#include <cerrno>
#include <cstring>
#include <filesystem>
#include <utility>

#include "absl/container/flat_hash_set.h"
#include "absl/strings/str_cat.h"
#include "absl/synchronization/notification.h"
#include "absl/time/time.h"
#include "daemon/ledger/entries.h"
#include "daemon/ledger/lookup.h"
#include "daemon/ledger/schema.h"
#include "daemon/ledger/set_ids.h"
#include "daemon/ledger/wal_io.h"
#include "daemon/scoring/packed_row.h"
#include "daemon/util/event_log.h"
#include "google/protobuf/util/message_differencer.h"

namespace plumbline::daemon {

struct SqliteLedger::Job {
  std::vector<ScoreEntry> scores;
  // Per score, what the writer did (AppendScores' answer).
  std::vector<ScoreWrite> written;
  // Why this job's scores were refused as a whole (ALREADY_EXISTS: a
  // record id scored before with other features); OK otherwise. The rest
  // of the group commits.
  absl::Status refused;
  std::vector<OutcomeEntry> outcomes;
  std::vector<OutcomeResult> results;
  // Per outcome, what ReportOutcomes did before queueing it.
  enum Checked : uint8_t {
    kUnchecked,  // for the writer to look up
    kFound,      // its scores are in results[i].labelled
    kRefused,    // invalid; results[i].status says why
  };
  std::vector<uint8_t> checked;
  // SqliteLedger::retention_passes_ before the lookups: if retention ran since,
  // it may have deleted scores found, and the writer looks again.
  int64_t retention_passes = 0;
  absl::Status status;
  absl::Notification done;
  size_t rows() const { return scores.size() + outcomes.size(); }
};

// Scores are inserted this many rows per statement: one step of a multi-row
// INSERT costs much less than as many single-row steps (measured with
// tests/bench/ledger_bench's rows: 128 rows per statement took 2.50 us of
// writer CPU per row where 32 took 2.80 and 64 took 2.70).
constexpr int kScoresPerInsert = 128;
// The WAL size (in pages) past which the writer asks WalCheckpointer for a
// checkpoint: SQLite's own automatic checkpoint size.
constexpr int kCheckpointFrames = 1000;
// The WAL size past which the writer checkpoints itself, between groups.
// The WAL only starts over once a checkpoint has copied all of it before the
// writer's next transaction, which a background checkpoint racing a writer
// under sustained load rarely does (the WAL reached 108-112 MB in a
// 400,000-row run; with this, 17 MB); most pages are copied already.
constexpr int kWriterCheckpointFrames = 4 * kCheckpointFrames;
constexpr int kScoreColumns = 7;
// Outcomes, likewise, per INSERT.
constexpr int kOutcomesPerInsert = 128;
constexpr int kOutcomeColumns = 5;

struct SqliteLedger::Statements {
  std::unique_ptr<SqliteStatement> insert_score;
  std::unique_ptr<SqliteStatement> insert_scores;  // kScoresPerInsert rows
  std::unique_ptr<SqliteStatement> find_outcome;
  std::unique_ptr<SqliteStatement> find_scores;  // kFindScoresSql
  std::unique_ptr<SqliteStatement> insert_outcome;
  std::unique_ptr<SqliteStatement> insert_outcomes;  // kOutcomesPerInsert rows
  std::unique_ptr<SqliteStatement> savepoint, rollback_to, release;
  // The stored primary score of (record id, set name id).
  std::unique_ptr<SqliteStatement> find_primary;
  // Around all of a group's scores, and around one job's.
  std::unique_ptr<SqliteStatement> scores_savepoint, scores_rollback_to,
      scores_release;
  std::unique_ptr<SqliteStatement> job_savepoint, job_rollback_to, job_release;
  std::unique_ptr<SqliteStatement> begin;
  std::unique_ptr<SqliteStatement> commit;
  std::unique_ptr<SqliteStatement> rollback;
  std::unique_ptr<SqliteStatement> max_score_id;  // and max outcome seq
};

namespace {

int64_t Micros(absl::Time t) { return absl::ToUnixMicros(t); }

// Binds `e` with its set ids to parameters first + 1 .. first +
// kScoreColumns. The text is not copied: the job owns `e` until it is
// notified, after the commit. An active-role score carries its set name's
// id in primary_set (one per record id and set); a shadow score NULL.
void BindScore(SqliteStatement& ins, int first, const ScoreEntry& e,
               const LedgerSetId& ids) {
  ins.BindTextNoCopy(first + 1, e.record_id);
  ins.BindInt64(first + 2, ids.set_id);
  ins.BindInt64(first + 3, Micros(e.scored_at));
  ins.BindDouble(first + 4, e.log_odds);
  ins.BindDouble(first + 5, e.probability);
  if (IsPackedRow(e.features)) {
    ins.BindBlobNoCopy(first + 6, e.features);
  } else {
    ins.BindTextNoCopy(first + 6, e.features);  // JSON (tests, old callers)
  }
  if (e.role == ScoreRole::kActive) {
    ins.BindInt64(first + 7, ids.name_id);
  } else {
    ins.BindNull(first + 7);
  }
}

constexpr char kInsertScoreColumns[] =
    "INSERT INTO scores(record_id, set_id, scored_at_us, log_odds,"
    " probability, features, primary_set) VALUES ";

}  // namespace

int SqliteLedger::SchemaVersion() { return LatestLedgerSchemaVersion(); }

SqliteLedger::SqliteLedger(LedgerOptions options)
    : options_(std::move(options)),
      env_(options_.env != nullptr ? options_.env : LedgerEnv::Default()) {}

absl::StatusOr<std::unique_ptr<Ledger>> SqliteLedger::Open(
    LedgerOptions options) {
  const std::filesystem::path dir =
      std::filesystem::path(options.path).parent_path();
  if (!dir.empty()) {
    std::error_code ec;
    std::filesystem::create_directories(dir, ec);
    if (ec) {
      return absl::UnavailableError(
          absl::StrCat("ledger ", options.path, ": cannot create directory ",
                       dir.string(), ": ", ec.message()));
    }
  }
  std::unique_ptr<SqliteLedger> ledger(new SqliteLedger(std::move(options)));
  absl::StatusOr<std::unique_ptr<LedgerLock>> lock =
      LedgerLock::Acquire(ledger->options_.path, ledger->options_.holder_note);
  if (!lock.ok()) return lock.status();
  ledger->lock_ = *std::move(lock);
  const std::string& path = ledger->options_.path;
  // SQLite takes an empty file for a new database; plumbd never leaves one
  // (its first act is to write the header), so one is a truncated ledger or
  // someone else's file.
  if (struct stat st; ::stat(path.c_str(), &st) == 0 && st.st_size == 0) {
    return absl::FailedPreconditionError(absl::StrCat(
        "ledger ", path,
        " exists but is empty (0 bytes): a truncated ledger or not one "
        "plumbd made; restore it from a backup, or remove it to start a new "
        "ledger"));
  }
  auto db = SqliteDb::Open(path, ledger->env_);
  if (!db.ok()) return db.status();
  ledger->writer_db_ = *std::move(db);
  SqliteDb& w = *ledger->writer_db_;
  // SQLite opens a file it may not write read-only without a word.
  if (sqlite3_db_readonly(w.handle(), "main") == 1) {
    return absl::FailedPreconditionError(absl::StrCat(
        "ledger ", path,
        " cannot be written (a read-only or immutable file, or a read-only "
        "file system): plumbd must write every score it acknowledges"));
  }
  if (absl::Status st = w.Exec("PRAGMA journal_mode=WAL"); !st.ok()) return st;
  // NORMAL: COMMIT does not fsync; with durable_commits WalSyncer does it
  // before the acknowledgement (see daemon/wal_io.h).
  if (absl::Status st = w.Exec("PRAGMA synchronous=NORMAL"); !st.ok()) {
    return st;
  }
  if (absl::Status st = MigrateLedger(w); !st.ok()) return st;
  // The file the writer writes: CheckFile compares the path with it before
  // every group, so a deleted or replaced ledger stops acknowledgement.
  if (struct stat st; ::stat(path.c_str(), &st) == 0) {
    ledger->file_dev_ = st.st_dev;
    ledger->file_ino_ = st.st_ino;
  } else {
    return absl::UnavailableError(
        absl::StrCat("ledger ", path, ": cannot stat: ", std::strerror(errno)));
  }
  auto checkpointer =
      WalCheckpointer::Start(ledger->options_.path, ledger->env_);
  if (!checkpointer.ok()) return checkpointer.status();
  ledger->checkpointer_ = *std::move(checkpointer);
  // Replaces SQLite's automatic checkpoint inside COMMIT.
  sqlite3_wal_hook(w.handle(), &SqliteLedger::OnWalCommit, ledger.get());
  if (ledger->options_.durable_commits) {
    ledger->syncer_ = std::make_unique<WalSyncer>(
        absl::StrCat(ledger->options_.path, "-wal"), ledger->env_);
  }

  auto s = std::make_unique<Statements>();
  struct {
    std::unique_ptr<SqliteStatement>* out;
    const char* sql;
  } prepared[] = {
      {&s->find_primary,
       "SELECT ss.set_version, s.scored_at_us, s.log_odds, s.probability,"
       " s.features, ss.id, ss.layout FROM scores s"
       " JOIN score_sets ss ON ss.id = s.set_id"
       " WHERE s.record_id = ?1 AND s.primary_set = ?2"},
      {&s->scores_savepoint, "SAVEPOINT scores"},
      {&s->scores_rollback_to, "ROLLBACK TO scores"},
      {&s->scores_release, "RELEASE scores"},
      {&s->job_savepoint, "SAVEPOINT job"},
      {&s->job_rollback_to, "ROLLBACK TO job"},
      {&s->job_release, "RELEASE job"},
      {&s->find_outcome, "SELECT label FROM outcomes WHERE record_id = ?1"},
      {&s->find_scores, kFindScoresSql},
      {&s->insert_outcome,
       "INSERT INTO outcomes(record_id, label, observed_at_us, reported_at_us,"
       " seq) VALUES (?1,?2,?3,?4,?5) ON CONFLICT(record_id) DO NOTHING"},
      {&s->savepoint, "SAVEPOINT outcomes"},
      {&s->rollback_to, "ROLLBACK TO outcomes"},
      {&s->release, "RELEASE outcomes"},
      {&s->begin, "BEGIN IMMEDIATE"},
      {&s->commit, "COMMIT"},
      {&s->rollback, "ROLLBACK"},
      {&s->max_score_id,
       "SELECT coalesce((SELECT max(id) FROM scores), 0),"
       " coalesce((SELECT max(seq) FROM outcomes WHERE seq IS NOT NULL), 0)"},
  };
  for (auto& p : prepared) {
    auto stmt = w.Prepare(p.sql);
    if (!stmt.ok()) return stmt.status();
    *p.out = *std::move(stmt);
  }
  // Scores go in with ON CONFLICT DO NOTHING: a row the unique index
  // scores_by_record refuses (the record id of a set scored before) is
  // skipped, and the writer then sorts out repeats from conflicts.
  auto stmt = w.Prepare(absl::StrCat(kInsertScoreColumns,
                                     "(?,?,?,?,?,?,?) ON CONFLICT DO NOTHING"));
  if (!stmt.ok()) return stmt.status();
  s->insert_score = *std::move(stmt);
  std::string many = kInsertScoreColumns;
  for (int r = 0; r < kScoresPerInsert; ++r) {
    absl::StrAppend(&many, r == 0 ? "" : ",", "(?,?,?,?,?,?,?)");
  }
  absl::StrAppend(&many, " ON CONFLICT DO NOTHING");
  stmt = w.Prepare(many);
  if (!stmt.ok()) return stmt.status();
  s->insert_scores = *std::move(stmt);
  many =
      "INSERT INTO outcomes(record_id, label, observed_at_us, reported_at_us,"
      " seq) VALUES ";
  for (int r = 0; r < kOutcomesPerInsert; ++r) {
    absl::StrAppend(&many, r == 0 ? "" : ",", "(?,?,?,?,?)");
  }
  absl::StrAppend(&many, " ON CONFLICT(record_id) DO NOTHING");
  stmt = w.Prepare(many);
  if (!stmt.ok()) return stmt.status();
  s->insert_outcomes = *std::move(stmt);
  // Where the committed rows end: new outcomes are numbered on from here.
  {
    auto seq = w.QueryInt64(
        "SELECT coalesce(max(seq), 0) FROM outcomes WHERE seq IS NOT NULL");
    if (!seq.ok()) return seq.status();
    auto id = w.QueryInt64("SELECT coalesce(max(id), 0) FROM scores");
    if (!id.ok()) return id.status();
    ledger->outcome_seq_ = *seq;
    absl::MutexLock lock(&ledger->mu_);
    ledger->marks_ = LedgerMarks{*id, *seq};
  }
  auto set_ids = LedgerSetIds::Create(w);
  if (!set_ids.ok()) return set_ids.status();
  ledger->set_ids_ = *std::move(set_ids);
  ledger->stmts_ = std::move(s);
  ledger->lookup_ =
      std::make_unique<ScoreLookup>(ledger->options_.path, ledger->env_);
  ledger->writer_ = std::thread([l = ledger.get()] { l->WriterLoop(); });
  return ledger;
}

SqliteLedger::~SqliteLedger() {
  {
    absl::MutexLock lock(&mu_);
    stopping_ = true;
  }
  if (writer_.joinable()) writer_.join();
  syncer_.reset();  // acknowledges the last commits
  if (writer_db_ != nullptr) {
    sqlite3_wal_hook(writer_db_->handle(), nullptr, nullptr);
  }
  checkpointer_.reset();
}

int SqliteLedger::OnWalCommit(void* ledger, sqlite3*, const char*, int frames) {
  auto* l = static_cast<SqliteLedger*>(ledger);
  l->wal_frames_ = frames;
  if (frames >= kCheckpointFrames) l->checkpointer_->Request();
  return SQLITE_OK;
}

void SqliteLedger::set_rows_observer(
    std::function<void(const CommittedRows&)> fn) {
  absl::MutexLock lock(&mu_);
  rows_observer_ = std::move(fn);
}

absl::Status SqliteLedger::Flush() {
  auto job = std::make_shared<Job>();
  if (absl::Status s = Enqueue(job); !s.ok()) return s;
  job->done.WaitForNotification();
  return job->status;
}

LedgerMarks SqliteLedger::Marks() const {
  absl::MutexLock lock(&mu_);
  return marks_;
}

void SqliteLedger::set_commit_observer(
    std::function<void(absl::Duration, size_t)> fn) {
  absl::MutexLock lock(&mu_);
  commit_observer_ = std::move(fn);
}

LedgerStats SqliteLedger::stats() const {
  absl::MutexLock lock(&mu_);
  LedgerStats s = stats_;
  s.queued_rows = queued_rows_;
  return s;
}

absl::Status SqliteLedger::Enqueue(const std::shared_ptr<Job>& job) {
  absl::MutexLock lock(&mu_);
  if (stopping_) return absl::UnavailableError("ledger is shutting down");
  if (!failed_.ok()) return failed_;
  const auto rows = static_cast<int64_t>(job->rows());
  const auto capacity = static_cast<int64_t>(options_.queue_capacity_rows);
  if (absl::Status st = QueueAdmits(rows, queued_rows_, capacity); !st.ok()) {
    return st;
  }
  queued_rows_ += rows;
  queue_.push_back(job);
  return absl::OkStatus();
}

absl::StatusOr<std::vector<ScoreWrite>> SqliteLedger::AppendScores(
    std::vector<ScoreEntry> scores) {
  if (scores.empty()) return std::vector<ScoreWrite>();
  for (const ScoreEntry& e : scores) {
    if (absl::Status st = CheckRecordId(e.record_id, e.set_name); !st.ok()) {
      return st;
    }
  }
  auto job = std::make_shared<Job>();
  const size_t n = scores.size();
  job->scores = std::move(scores);
  job->written.resize(n);
  if (absl::Status st = Enqueue(job); !st.ok()) return st;
  if (options_.ack == LedgerOptions::Ack::kQueued) {
    return std::vector<ScoreWrite>(n);  // repeats are not known yet
  }
  job->done.WaitForNotification();
  if (!job->status.ok()) return job->status;
  return std::move(job->written);
}

absl::StatusOr<std::vector<OutcomeResult>> SqliteLedger::ReportOutcomes(
    std::vector<OutcomeEntry> outcomes) {
  auto job = std::make_shared<Job>();
  job->outcomes = std::move(outcomes);
  const size_t n = job->outcomes.size();
  job->results.resize(n);
  if (n == 0) return std::move(job->results);
  // The checks and the lookups run here, on the caller's thread, so that
  // callers do them in parallel and the writer only inserts.
  job->checked.assign(n, Job::kUnchecked);
  std::vector<uint8_t> wanted(n, 0);
  for (size_t i = 0; i < n; ++i) {
    absl::Status invalid = CheckOutcomeEntry(job->outcomes[i]);
    if (!invalid.ok()) {
      job->results[i].status = std::move(invalid);
      job->checked[i] = Job::kRefused;
    } else {
      wanted[i] = 1;
    }
  }
  job->retention_passes = retention_passes_.load(std::memory_order_acquire);
  std::vector<uint8_t> found(n, 0);
  // On an error nothing is marked found and the writer looks them up.
  lookup_->Find(job->outcomes, wanted, job->results, found).IgnoreError();
  for (size_t i = 0; i < n; ++i) {
    if (found[i]) job->checked[i] = Job::kFound;
  }
  if (absl::Status st = Enqueue(job); !st.ok()) return st;
  job->done.WaitForNotification();
  if (!job->status.ok()) return job->status;
  return std::move(job->results);
}

void SqliteLedger::WriterLoop() {
  for (;;) {
    std::vector<std::shared_ptr<Job>> group;
    {
      absl::MutexLock lock(&mu_);
      mu_.Await(absl::Condition(
          +[](SqliteLedger* l) ABSL_EXCLUSIVE_LOCKS_REQUIRED(l->mu_) {
            return !l->queue_.empty() || l->stopping_;
          },
          this));
      if (queue_.empty()) return;  // stopping and drained
      size_t rows = 0;
      while (!queue_.empty() &&
             (group.empty() ||
              rows + queue_.front()->rows() <= options_.max_group_rows)) {
        rows += queue_.front()->rows();
        group.push_back(std::move(queue_.front()));
        queue_.pop_front();
      }
    }
    const absl::Time start = absl::Now();
    size_t rows = 0;
    for (const auto& job : group) rows += job->rows();
    // Nothing is written once the ledger has failed (an fsync that failed,
    // the file removed or replaced): it could not be acknowledged.
    absl::Status st = Failure();
    if (st.ok()) st = CheckFile();
    LedgerMarks marks;
    if (st.ok()) st = RunGroup(group, &marks);
    if (st.ok()) {
      Committed(group, marks);
    } else {
      WriteFailed(st, rows);
    }
    {
      absl::MutexLock lock(&mu_);
      queued_rows_ -= static_cast<int64_t>(rows);
    }
    if (st.ok() && syncer_ != nullptr) {
      // Acknowledged once the WAL is on disk; meanwhile this thread goes on
      // with the next group.
      syncer_->After(
          [this, group = std::move(group), start, rows](absl::Status synced) {
            if (!synced.ok()) {
              // Committed but maybe not on disk: after a failed fsync the
              // kernel may have dropped the pages it could not write, and a
              // later fsync would then succeed without them. So nothing
              // more is acknowledged (fail-stop, as databases do).
              Fail(synced);
              WriteFailed(synced, rows);
            }
            Finish(group, std::move(synced), start, rows);
          });
    } else {
      Finish(group, st, start, rows);
    }
    if (st.ok() &&
        options_.now() - last_retention_ >= options_.retention_interval) {
      last_retention_ = options_.now();
      // Retention failing leaves extra rows, never loses acknowledged ones;
      // the next interval tries again. Logged and counted.
      if (absl::Status r = ApplyRetention(); !r.ok()) {
        LogEvent(LogLevel::kError, "ledger_retention_failed",
                 {{"file", options_.path},
                  {"error", r.message()},
                  {"effect", "rows past retention stay until a later pass"}});
        absl::MutexLock lock(&mu_);
        ++stats_.retention_failures;
      }
      // After the pass's commit: a lookup that began before it is redone.
      retention_passes_.fetch_add(1, std::memory_order_release);
    }
    if (wal_frames_ >= kWriterCheckpointFrames) {
      checkpointer_->CheckpointOn(*writer_db_);
    }
  }
}

absl::Status SqliteLedger::Failure() const {
  absl::MutexLock lock(&mu_);
  return failed_;
}

void SqliteLedger::Fail(const absl::Status& cause) {
  {
    absl::MutexLock lock(&mu_);
    if (!failed_.ok()) return;
    failed_ = absl::UnavailableError(absl::StrCat(
        "the ledger stopped taking writes: ", cause.message(),
        "; nothing more is acknowledged until plumbd is restarted on a "
        "healthy ledger"));
    stats_.failed = true;
  }
  LogEvent(LogLevel::kError, "ledger_failed",
           {{"file", options_.path},
            {"error", cause.message()},
            {"effect",
             "every write is refused with UNAVAILABLE until plumbd is "
             "restarted; acknowledged rows are on disk"}});
}

absl::Status SqliteLedger::CheckFile() {
  struct stat now;
  absl::Status lost;
  if (::stat(options_.path.c_str(), &now) != 0) {
    lost = absl::UnavailableError(absl::StrCat(
        "ledger ", options_.path, " is gone (", std::strerror(errno),
        "): rows written now would go to a deleted file"));
  } else if (now.st_dev != file_dev_ || now.st_ino != file_ino_) {
    lost = absl::UnavailableError(
        absl::StrCat("ledger ", options_.path,
                     " was replaced by another file since plumbd opened it"));
  }
  if (!lost.ok()) Fail(lost);
  return lost;
}

void SqliteLedger::WriteFailed(const absl::Status& st, size_t rows) {
  const absl::string_view reason = WriteFailureReason(st);
  LogEvent(LogLevel::kError, "ledger_write_failed",
           {{"file", options_.path},
            {"reason", reason},
            {"rows", absl::StrCat(rows)},
            {"error", st.message()},
            {"effect",
             "the calls get the error; nothing of them is "
             "acknowledged"}});
  absl::MutexLock lock(&mu_);
  ++stats_.write_failures[std::string(reason)];
}

void SqliteLedger::Finish(const std::vector<std::shared_ptr<Job>>& group,
                          absl::Status st, absl::Time start, size_t rows) {
  const absl::Duration latency = absl::Now() - start;
  std::function<void(absl::Duration, size_t)> observer;
  {
    absl::MutexLock lock(&mu_);
    if (st.ok()) {
      ++stats_.committed_transactions;
      stats_.committed_rows += static_cast<int64_t>(rows);
      stats_.last_commit_latency = latency;
    }
    observer = commit_observer_;
  }
  if (st.ok() && observer) observer(latency, rows);
  for (const auto& job : group) {
    job->status = st.ok() ? job->refused : st;
    job->done.Notify();
  }
}

void SqliteLedger::Committed(const std::vector<std::shared_ptr<Job>>& group,
                             const LedgerMarks& marks) {
  std::function<void(const CommittedRows&)> observer;
  {
    absl::MutexLock lock(&mu_);
    marks_ = marks;
    observer = rows_observer_;
  }
  if (!observer) return;
  CommittedRows rows;
  rows.marks = marks;
  for (const auto& job : group) {
    if (!job->refused.ok()) continue;
    for (size_t i = 0; i < job->scores.size(); ++i) {
      if (i < job->written.size() && job->written[i].repeat) continue;
      rows.scores.push_back(&job->scores[i]);
    }
  }
  // In the order WriteOutcomes numbered them.
  for (const auto& job : group) {
    for (const OutcomeResult& r : job->results) {
      if (!r.status.ok() || r.repeat) continue;
      for (const LabelledScore& l : r.labelled) rows.labelled.push_back(&l);
    }
  }
  observer(rows);
}

absl::Status SqliteLedger::WriteScores(
    std::vector<std::shared_ptr<Job>>& group) {
  Statements& s = *stmts_;
  // Scores in queue order, kScoresPerInsert rows per statement.
  std::vector<const ScoreEntry*> scores;
  std::vector<LedgerSetId> ids;
  for (const auto& job : group) {
    for (const ScoreEntry& e : job->scores) {
      absl::StatusOr<LedgerSetId> id = set_ids_->Id(e);
      if (!id.ok()) return id.status();
      scores.push_back(&e);
      ids.push_back(*id);
    }
  }
  if (scores.empty()) return absl::OkStatus();
  // Usually every record id is new and the rows go in as they are. When
  // fewer went in than were sent, some (record id, set) was there before:
  // all of it is undone and the jobs go again one by one (WriteJobScores),
  // so each repeat and each conflict gets its own answer.
  if (absl::Status st = s.scores_savepoint->Run(); !st.ok()) return st;
  int64_t inserted = 0;
  size_t next = 0;
  absl::Status st;
  for (; st.ok() && scores.size() - next >= kScoresPerInsert;
       next += kScoresPerInsert) {
    for (int r = 0; r < kScoresPerInsert; ++r) {
      BindScore(*s.insert_scores, r * kScoreColumns, *scores[next + r],
                ids[next + r]);
    }
    st = s.insert_scores->Run();
    inserted += writer_db_->Changes();
  }
  for (; st.ok() && next < scores.size(); ++next) {
    BindScore(*s.insert_score, 0, *scores[next], ids[next]);
    st = s.insert_score->Run();
    inserted += writer_db_->Changes();
  }
  if (!st.ok()) return st;
  const bool all_new = inserted == static_cast<int64_t>(scores.size());
  if (!all_new) {
    if (absl::Status r = s.scores_rollback_to->Run(); !r.ok()) return r;
  }
  if (absl::Status r = s.scores_release->Run(); !r.ok()) return r;
  if (all_new) return absl::OkStatus();
  size_t first = 0;
  for (auto& job : group) {
    const size_t n = job->scores.size();
    if (absl::Status r = WriteJobScores(*job, &ids[first]); !r.ok()) return r;
    first += n;
  }
  return absl::OkStatus();
}

absl::Status SqliteLedger::WriteJobScores(Job& job, const LedgerSetId* ids) {
  Statements& s = *stmts_;
  if (absl::Status st = s.job_savepoint->Run(); !st.ok()) return st;
  // Record ids of this job found stored with the same features: their
  // shadow scores were stored with them and are not written again.
  absl::flat_hash_set<std::string> repeats;
  for (size_t i = 0; i < job.scores.size(); ++i) {
    const ScoreEntry& e = job.scores[i];
    if (e.role == ScoreRole::kShadow && repeats.contains(e.record_id)) {
      job.written[i].repeat = true;
      continue;
    }
    BindScore(*s.insert_score, 0, e, ids[i]);
    if (absl::Status st = s.insert_score->Run(); !st.ok()) return st;
    if (writer_db_->Changes() == 1) continue;
    // Refused by scores_by_record: this set scored the record id before.
    s.find_primary->BindTextNoCopy(1, e.record_id);
    s.find_primary->BindInt64(2, ids[i].name_id);
    absl::StatusOr<bool> row = s.find_primary->Step();
    ScoreEntry stored;
    if (row.ok() && *row) {
      stored.record_id = e.record_id;
      stored.set_name = e.set_name;
      stored.set_version = s.find_primary->ColumnText(0);
      stored.scored_at = absl::FromUnixMicros(s.find_primary->ColumnInt64(1));
      stored.log_odds = s.find_primary->ColumnDouble(2);
      stored.probability = s.find_primary->ColumnDouble(3);
      stored.features = s.find_primary->ColumnText(4);
      stored.layout = StoredLayout(s.find_primary->ColumnInt64(5),
                                   s.find_primary->ColumnText(6));
    }
    s.find_primary->Reset();
    if (!row.ok()) return row.status();
    if (!*row) {
      return absl::InternalError(absl::StrCat(
          "ledger: record id '", e.record_id, "' of set '", e.set_name,
          "' was refused as a repeat but no stored score was found"));
    }
    if (SameFeatures(stored, e)) {
      repeats.insert(e.record_id);
      job.written[i].repeat = true;
      job.written[i].stored = std::move(stored);
      continue;
    }
    // The same id for a different record: the whole job is refused and the
    // rest of the group goes on.
    job.refused = RecordConflict(e, stored);
    if (absl::Status st = s.job_rollback_to->Run(); !st.ok()) return st;
    break;
  }
  if (!job.refused.ok()) {
    for (ScoreWrite& w : job.written) w = ScoreWrite{};
    absl::MutexLock lock(&mu_);
    ++stats_.conflicting_records;
  } else {
    int64_t repeated = 0;
    for (const ScoreWrite& w : job.written) repeated += w.repeat ? 1 : 0;
    absl::MutexLock lock(&mu_);
    stats_.repeated_records += repeated;
  }
  if (!job.refused.ok() && options_.ack == LedgerOptions::Ack::kQueued) {
    // The caller was answered before this ran: the log is the only trace.
    LogEvent(LogLevel::kError, "ledger_scores_refused",
             {{"error", job.refused.message()},
              {"rows", absl::StrCat(job.scores.size())},
              {"effect",
               "acknowledged (ack=queued) but not recorded: a record id "
               "scored before with other features"}});
  }
  return s.job_release->Run();
}

absl::Status SqliteLedger::RunGroup(std::vector<std::shared_ptr<Job>>& group,
                                    LedgerMarks* marks) {
  Statements& s = *stmts_;
  if (absl::Status st = s.begin->Run(); !st.ok()) return st;
  absl::Status st = WriteScores(group);
  if (st.ok()) st = WriteOutcomes(group);
  if (st.ok()) {
    // Inside the transaction: the writer is the only one, so these are the
    // highest once it commits (a seq given to a repeat is not stored).
    absl::StatusOr<bool> row = s.max_score_id->Step();
    if (row.ok() && *row) {
      *marks = LedgerMarks{s.max_score_id->ColumnInt64(0),
                           s.max_score_id->ColumnInt64(1)};
    }
    s.max_score_id->Reset();
    if (!row.ok()) st = row.status();
  }
  if (st.ok()) st = s.commit->Run();
  if (!st.ok()) {
    {
      absl::MutexLock lock(&mu_);
      outcome_seq_ = marks_.outcome_seq;  // the undone seqs are free again
    }
    s.rollback->Run().IgnoreError();  // the original error is what matters
    set_ids_->Forget();  // the rollback may have undone new score_sets rows
    for (auto& job : group) {
      job->refused = absl::OkStatus();
      for (ScoreWrite& w : job->written) w = ScoreWrite{};
      for (size_t i = 0; i < job->results.size(); ++i) {
        if (job->checked[i] != Job::kRefused) job->results[i] = OutcomeResult{};
      }
    }
  }
  return st;
}

absl::Status SqliteLedger::WriteOutcomes(
    std::vector<std::shared_ptr<Job>>& group) {
  Statements& s = *stmts_;
  const absl::Time now = options_.now();
  // The outcomes to insert, in queue order, with their observed time.
  struct Pending {
    const OutcomeEntry* o;
    OutcomeResult* result;
    int64_t observed_us;
    int64_t seq;  // commit order
  };
  std::vector<Pending> pending;
  for (auto& job : group) {
    // Scores found before a retention pass deleted some may be gone.
    const bool stale = job->retention_passes != retention_passes_.load();
    for (size_t i = 0; i < job->outcomes.size(); ++i) {
      if (job->checked[i] == Job::kRefused) continue;
      const OutcomeEntry& o = job->outcomes[i];
      OutcomeResult& result = job->results[i];
      if (stale || job->checked[i] != Job::kFound) {
        // Not found by the caller's lookup: its score may have been
        // queued with it, and the writer's connection sees this
        // transaction's rows.
        result.labelled.clear();
        absl::StatusOr<bool> any =
            FindScores(*s.find_scores, o.record_id, o.label, result.labelled);
        if (!any.ok()) return any.status();
        if (!*any) {
          result.status = absl::NotFoundError(absl::StrCat(
              "no score with record_id '", o.record_id, "' is in the ledger"));
          continue;
        }
      }
      const absl::Time observed = OrNow(o.observed_at, now);
      for (LabelledScore& l : result.labelled) l.observed_at = observed;
      pending.push_back(Pending{&o, &result, Micros(observed), ++outcome_seq_});
    }
  }
  const int64_t now_us = Micros(now);
  auto bind = [now_us](SqliteStatement& ins, int first, const Pending& p) {
    ins.BindTextNoCopy(first + 1, p.o->record_id);
    ins.BindInt64(first + 2, p.o->label);
    ins.BindInt64(first + 3, p.observed_us);
    ins.BindInt64(first + 4, now_us);
    ins.BindInt64(first + 5, p.seq);
  };
  // Usually every outcome is new and kOutcomesPerInsert go in one
  // statement. When fewer rows went in than were sent (a repeat, a label
  // already there, or one record twice in the statement), the statement is
  // undone and its rows go one by one, so each gets its own answer.
  size_t next = 0;
  for (; pending.size() - next >= kOutcomesPerInsert;
       next += kOutcomesPerInsert) {
    if (absl::Status st = s.savepoint->Run(); !st.ok()) return st;
    for (int r = 0; r < kOutcomesPerInsert; ++r) {
      bind(*s.insert_outcomes, r * kOutcomeColumns, pending[next + r]);
    }
    if (absl::Status st = s.insert_outcomes->Run(); !st.ok()) return st;
    const bool all_new = writer_db_->Changes() == kOutcomesPerInsert;
    if (!all_new) {
      if (absl::Status st = s.rollback_to->Run(); !st.ok()) return st;
    }
    if (absl::Status st = s.release->Run(); !st.ok()) return st;
    if (all_new) continue;
    for (int r = 0; r < kOutcomesPerInsert; ++r) {
      const Pending& p = pending[next + r];
      bind(*s.insert_outcome, 0, p);
      if (absl::Status st = InsertOutcome(*p.o, *p.result); !st.ok()) return st;
    }
  }
  for (; next < pending.size(); ++next) {
    const Pending& p = pending[next];
    bind(*s.insert_outcome, 0, p);
    if (absl::Status st = InsertOutcome(*p.o, *p.result); !st.ok()) return st;
  }
  return absl::OkStatus();
}

absl::Status SqliteLedger::InsertOutcome(const OutcomeEntry& o,
                                         OutcomeResult& result) {
  Statements& s = *stmts_;
  // Inserting first and reading the old label only on a conflict saves a
  // lookup for the usual case, a new outcome.
  if (absl::Status st = s.insert_outcome->Run(); !st.ok()) return st;
  if (writer_db_->Changes() == 1) return absl::OkStatus();
  result.labelled.clear();  // it labelled them before
  s.find_outcome->BindTextNoCopy(1, o.record_id);
  auto old = s.find_outcome->Step();
  const int64_t existing =
      old.ok() && *old ? s.find_outcome->ColumnInt64(0) : -1;
  s.find_outcome->Reset();
  if (!old.ok()) return old.status();
  if (existing == o.label) {
    result.repeat = true;
  } else {
    result.status = absl::FailedPreconditionError(absl::StrCat(
        "record '", o.record_id, "' already has outcome ", existing,
        "; a different label (", o.label, ") is refused"));
  }
  return absl::OkStatus();
}

absl::Status SqliteLedger::ApplyRetention() {
  SqliteDb& w = *writer_db_;
  // Deletes the scores matching `where` and their outcomes, in one transaction.
  auto delete_scores = [&w](const std::string& where) {
    absl::Status st = w.Exec(absl::StrCat(
        "BEGIN IMMEDIATE;"
        "DELETE FROM outcomes WHERE record_id IN (SELECT record_id FROM scores"
        " WHERE ",
        where,
        ");"
        "DELETE FROM scores WHERE ",
        where, ";COMMIT"));
    if (!st.ok()) w.Exec("ROLLBACK").IgnoreError();
    return st;
  };
  if (options_.retention_age != absl::InfiniteDuration()) {
    // Ids grow with scored_at_us (schema 4 has no index by time): delete
    // the oldest ids up to the first score within the age, walking only the
    // rows to delete. A score stored just after a newer one (scored a few
    // milliseconds earlier by another thread) goes in a later pass.
    const int64_t cutoff = Micros(options_.now() - options_.retention_age);
    auto first_kept = w.QueryInt64(absl::StrCat(
        "SELECT COALESCE((SELECT id FROM scores WHERE scored_at_us >= ", cutoff,
        " ORDER BY id LIMIT 1), (SELECT COALESCE(MAX(id), 0) + 1 FROM "
        "scores))"));
    if (!first_kept.ok()) return first_kept.status();
    if (absl::Status st = delete_scores(absl::StrCat("id < ", *first_kept));
        !st.ok()) {
      return st;
    }
  }
  if (options_.retention_rows > 0) {
    return delete_scores(absl::StrCat("id <= (SELECT COALESCE(MAX(id), 0) - ",
                                      options_.retention_rows,
                                      " FROM scores)"));
  }
  return absl::OkStatus();
}

}  // namespace plumbline::daemon
