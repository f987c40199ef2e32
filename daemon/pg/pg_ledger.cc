// File: daemon/pg/pg_ledger.cc
// The PostgreSQL ledger: the writer (group commit under the commit-order
// lock), the follower (the committed-rows feed), and the reads.
#include "daemon/pg/pg_ledger.h"

#include <algorithm>
#include <deque>
#include <string>
#include <thread>
#include <utility>
#include <vector>

#include "absl/base/thread_annotations.h"
#include "absl/container/flat_hash_map.h"
#include "absl/container/flat_hash_set.h"
#include "absl/strings/escaping.h"
#include "absl/strings/match.h"
#include "absl/strings/numbers.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_format.h"
#include "absl/strings/str_join.h"
#include "absl/synchronization/mutex.h"
#include "absl/synchronization/notification.h"
#include "absl/time/civil_time.h"
#include "absl/time/clock.h"
#include "daemon/ledger/entries.h"
#include "daemon/pg/pg_connection.h"
#include "daemon/pg/pg_schema.h"
#include "daemon/util/caller_text.h"
#include "daemon/util/event_log.h"
#include "google/protobuf/util/json_util.h"

namespace plumbline::daemon {
namespace {

// Rows the follower reads per round (scores, then outcomes): bounds what
// one round holds in memory however far behind it is.
constexpr int kFollowBatch = 5000;
// Idle read connections kept for the next reader.
constexpr size_t kIdleReaders = 4;
// Days of partitions prepared ahead of today, at Open and on each
// retention pass.
constexpr int kDaysAhead = 2;

int64_t Micros(absl::Time t) { return absl::ToUnixMicros(t); }

// A timestamptz literal PostgreSQL reads the same whatever its TimeZone.
std::string PgTime(absl::Time t) {
  return absl::FormatTime("%Y-%m-%d %H:%M:%E6S+00", t, absl::UTCTimeZone());
}

// The select-list expression giving a timestamptz column as Unix
// microseconds (exact: extract gives numeric).
std::string MicrosOf(absl::string_view column) {
  return absl::StrCat("(extract(epoch from ", column, ") * 1000000)::bigint");
}

// A double as text that reads back as the same double (StrCat keeps six
// significant digits).
std::string ExactDouble(double v) { return absl::StrFormat("%.17g", v); }

// bytea in text form ("\x0a1b..."), as COPY and parameters take it.
std::string ByteaText(absl::string_view bytes) {
  return absl::StrCat("\\x", absl::BytesToHexString(bytes));
}

absl::StatusOr<std::string> FromByteaText(const PgValue& v) {
  if (!v || !absl::StartsWith(*v, "\\x")) {
    return absl::DataLossError("PostgreSQL ledger: a bytea value is not hex");
  }
  return absl::HexStringToBytes(absl::string_view(*v).substr(2));
}

// A text[] literal of `values` for unnest($1::text[]).
std::string TextArray(const std::vector<const std::string*>& values) {
  std::string out = "{";
  for (size_t i = 0; i < values.size(); ++i) {
    if (i > 0) out.push_back(',');
    out.push_back('"');
    for (char c : *values[i]) {
      if (c == '"' || c == '\\') out.push_back('\\');
      out.push_back(c);
    }
    out.push_back('"');
  }
  out.push_back('}');
  return out;
}

std::string IntArray(const std::vector<int64_t>& values) {
  return absl::StrCat("{", absl::StrJoin(values, ","), "}");
}

int64_t Int(const PgValue& v) {
  int64_t out = 0;
  if (v) (void)absl::SimpleAtoi(*v, &out);
  return out;
}

double Double(const PgValue& v) {
  double out = 0;
  if (v) (void)absl::SimpleAtod(*v, &out);
  return out;
}

const std::string& Text(const PgValue& v) {
  static const std::string* const kEmpty = new std::string();
  return v ? *v : *kEmpty;
}

// The columns ScoreFromRow and LabelledFromRow read, in their order.
const std::string& ScoreColumns() {
  static const std::string* const kColumns = new std::string(absl::StrCat(
      "s.record_id, ss.set_name, ss.set_version, ss.role, ",
      MicrosOf("s.scored_at"),
      ", s.log_odds, s.probability, s.features, ss.id, ss.layout, s.id"));
  return *kColumns;
}
const std::string& LabelledColumns() {
  static const std::string* const kColumns = new std::string(absl::StrCat(
      "s.record_id, ss.set_name, ss.set_version, ss.role, s.log_odds,"
      " s.probability, o.label, ",
      MicrosOf("s.scored_at"), ", ", MicrosOf("o.observed_at"),
      ", s.features, ss.id, ss.layout, o.seq"));
  return *kColumns;
}

// A set's row in score_sets and its name's in set_names.
struct SetIds {
  int64_t set_id = 0;
  int64_t name_id = 0;
};

class PgLedgerImpl final : public Ledger {
 public:
  explicit PgLedgerImpl(LedgerOptions options) : options_(std::move(options)) {}
  ~PgLedgerImpl() override;

  absl::Status Start();

  absl::StatusOr<std::vector<ScoreWrite>> AppendScores(
      std::vector<ScoreEntry> scores) override;
  absl::StatusOr<std::vector<OutcomeResult>> ReportOutcomes(
      std::vector<OutcomeEntry> outcomes) override;
  absl::StatusOr<StoredRecord> FindRecord(
      const std::string& set_name, const std::string& record_id) override;
  LedgerStats stats() const override;
  size_t queue_capacity_rows() const override {
    return options_.queue_capacity_rows;
  }
  void set_commit_observer(
      std::function<void(absl::Duration, size_t)> fn) override;
  void set_rows_observer(std::function<void(const CommittedRows&)> fn) override;
  LedgerMarks Marks() const override;
  absl::Status Flush() override;
  absl::StatusOr<MarkRecords> RecordsAt(const LedgerMarks& marks) override;

 protected:
  absl::Status ReadLabelled(const std::string& set_name, int64_t limit,
                            absl::Time since,
                            const std::function<void(const LabelledScore&)>& fn,
                            const LedgerMarks* upto) override;
  absl::Status ReadScores(const std::string& set_name, int64_t limit,
                          absl::Time since,
                          const std::function<void(const ScoreEntry&)>& fn,
                          const LedgerMarks* upto) override;
  absl::Status ReadScoresAfter(int64_t after_id,
                               const std::function<void(const ScoreEntry&)>& fn,
                               int64_t upto_id) override;
  absl::Status ReadLabelledAfter(
      int64_t after_seq, const std::function<void(const LabelledScore&)>& fn,
      int64_t upto_seq) override;

 private:
  struct Job {
    std::vector<ScoreEntry> scores;
    std::vector<ScoreWrite> written;
    absl::Status refused;  // ALREADY_EXISTS for the whole job
    std::vector<OutcomeEntry> outcomes;
    std::vector<OutcomeResult> results;
    bool flush = false;
    absl::Status status;
    absl::Notification done;
    size_t rows() const { return scores.size() + outcomes.size(); }
  };

  // A connection borrowed from the idle readers (or a new one).
  class Reader {
   public:
    Reader(PgLedgerImpl* ledger, std::unique_ptr<PgConnection> db)
        : ledger_(ledger), db_(std::move(db)) {}
    ~Reader() {
      if (db_ != nullptr && ok_) ledger_->ReturnReader(std::move(db_));
    }
    PgConnection& operator*() { return *db_; }
    PgConnection* operator->() { return db_.get(); }
    // A connection whose last call failed is closed, not kept.
    void Broken() { ok_ = false; }

   private:
    PgLedgerImpl* ledger_;
    std::unique_ptr<PgConnection> db_;
    bool ok_ = true;
  };

  absl::StatusOr<std::unique_ptr<Reader>> BorrowReader();
  void ReturnReader(std::unique_ptr<PgConnection> db);
  // Runs `sql` on a reader and calls `row` for each row.
  absl::Status ReadRows(absl::string_view sql, std::vector<PgValue> params,
                        const std::function<void(const PgRow&)>& row);

  absl::Status Enqueue(const std::shared_ptr<Job>& job);
  void WriterLoop();
  absl::Status RunGroup(std::vector<std::shared_ptr<Job>>& group,
                        int64_t* last_id, int64_t* last_seq);
  absl::Status EnsureDays(std::vector<std::shared_ptr<Job>>& group);
  absl::StatusOr<SetIds> IdsOf(const ScoreEntry& e);
  absl::Status WriteScores(std::vector<std::shared_ptr<Job>>& group,
                           int64_t* last_id);
  absl::Status WriteOutcomes(std::vector<std::shared_ptr<Job>>& group,
                             int64_t* last_seq);
  absl::StatusOr<std::vector<int64_t>> Draw(absl::string_view sequence,
                                            size_t n);
  void WriteFailed(const absl::Status& st, size_t rows);
  void ApplyRetention();

  void FollowLoop();
  // Reads and feeds one round after marks_; true when it read a full batch
  // (there may be more).
  absl::StatusOr<bool> FollowRound(PgConnection& db);

  std::shared_ptr<const v1::RowLayout> StoredLayout(int64_t set_id,
                                                    const PgValue& json);
  ScoreEntry ScoreFromRow(const PgRow& r);
  LabelledScore LabelledFromRow(const PgRow& r);

  const LedgerOptions options_;
  std::unique_ptr<PgConnection> writer_db_;  // writer thread only
  // (set, version, role) -> ids; writer thread only.
  absl::flat_hash_map<std::string, SetIds> set_ids_;
  absl::flat_hash_set<int64_t> days_ready_;           // writer thread only
  absl::Time last_retention_ = absl::InfinitePast();  // writer thread only

  mutable absl::Mutex mu_;
  std::deque<std::shared_ptr<Job>> queue_ ABSL_GUARDED_BY(mu_);
  int64_t queued_rows_ ABSL_GUARDED_BY(mu_) = 0;
  bool stopping_ ABSL_GUARDED_BY(mu_) = false;
  LedgerStats stats_ ABSL_GUARDED_BY(mu_);
  std::function<void(absl::Duration, size_t)> commit_observer_
      ABSL_GUARDED_BY(mu_);
  std::function<void(const CommittedRows&)> rows_observer_ ABSL_GUARDED_BY(mu_);
  // What the follower has fed; and the last id / seq this process's writer
  // committed (Flush waits for the feed to pass them).
  LedgerMarks marks_ ABSL_GUARDED_BY(mu_);
  LedgerMarks written_ ABSL_GUARDED_BY(mu_);
  bool follow_stopping_ ABSL_GUARDED_BY(mu_) = false;

  absl::Mutex readers_mu_;
  std::vector<std::unique_ptr<PgConnection>> readers_
      ABSL_GUARDED_BY(readers_mu_);

  absl::Mutex layouts_mu_;
  absl::flat_hash_map<int64_t, std::shared_ptr<const v1::RowLayout>> layouts_
      ABSL_GUARDED_BY(layouts_mu_);

  std::thread writer_;
  std::thread follower_;
};

// ---------------------------------------------------------------- open/close

absl::Status PgLedgerImpl::Start() {
  absl::StatusOr<std::unique_ptr<PgConnection>> db =
      PgConnection::Connect(options_.path);
  if (!db.ok()) return db.status();
  writer_db_ = *std::move(db);
  if (absl::StatusOr<int> v = MigratePgLedger(*writer_db_); !v.ok()) {
    return v.status();
  }
  const absl::Time now = options_.now();
  if (absl::Status st = EnsurePartitions(*writer_db_, now,
                                         now + absl::Hours(24 * kDaysAhead));
      !st.ok()) {
    return st;
  }
  // The follower starts at the end: rows committed before Open are read
  // by whoever rebuilds from the ledger, up to Marks().
  absl::StatusOr<PgResult> ends = writer_db_->Query(
      "SELECT (SELECT coalesce(max(id), 0) FROM scores),"
      " (SELECT coalesce(max(seq), 0) FROM outcomes)");
  if (!ends.ok()) return ends.status();
  {
    absl::MutexLock lock(&mu_);
    marks_.score_id = Int(ends->rows[0][0]);
    marks_.outcome_seq = Int(ends->rows[0][1]);
    written_ = marks_;
  }
  writer_ = std::thread([this] { WriterLoop(); });
  follower_ = std::thread([this] { FollowLoop(); });
  return absl::OkStatus();
}

PgLedgerImpl::~PgLedgerImpl() {
  {
    absl::MutexLock lock(&mu_);
    stopping_ = true;
  }
  if (writer_.joinable()) writer_.join();
  {
    absl::MutexLock lock(&mu_);
    follow_stopping_ = true;
  }
  if (follower_.joinable()) follower_.join();
}

// ---------------------------------------------------------------- writes

absl::StatusOr<std::vector<ScoreWrite>> PgLedgerImpl::AppendScores(
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

absl::StatusOr<std::vector<OutcomeResult>> PgLedgerImpl::ReportOutcomes(
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

absl::Status PgLedgerImpl::Flush() {
  auto job = std::make_shared<Job>();
  job->flush = true;
  if (absl::Status s = Enqueue(job); !s.ok()) return s;
  job->done.WaitForNotification();
  if (!job->status.ok()) return job->status;
  // Then the feed: past everything this process committed, when someone
  // listens (without an observer the follower stands still).
  absl::MutexLock lock(&mu_);
  const LedgerMarks want = written_;
  auto fed = [this, &want]() ABSL_EXCLUSIVE_LOCKS_REQUIRED(mu_) {
    return !rows_observer_ || follow_stopping_ ||
           (marks_.score_id >= want.score_id &&
            marks_.outcome_seq >= want.outcome_seq);
  };
  // Bounded: with the server gone the feed cannot move, and a shutdown
  // must not wait for it forever.
  if (!mu_.AwaitWithTimeout(absl::Condition(&fed), kPgFlushFeedWait)) {
    return absl::DeadlineExceededError(absl::StrCat(
        "the committed-rows feed did not reach this replica's last commit "
        "within ",
        absl::FormatDuration(kPgFlushFeedWait),
        " (is the PostgreSQL server reachable?)"));
  }
  return absl::OkStatus();
}

absl::Status PgLedgerImpl::Enqueue(const std::shared_ptr<Job>& job) {
  absl::MutexLock lock(&mu_);
  if (stopping_) return absl::UnavailableError("ledger is shutting down");
  const auto rows = static_cast<int64_t>(job->rows());
  const auto capacity = static_cast<int64_t>(options_.queue_capacity_rows);
  if (absl::Status st = QueueAdmits(rows, queued_rows_, capacity); !st.ok()) {
    return st;
  }
  queued_rows_ += rows;
  queue_.push_back(job);
  return absl::OkStatus();
}

void PgLedgerImpl::WriterLoop() {
  for (;;) {
    std::vector<std::shared_ptr<Job>> group;
    {
      absl::MutexLock lock(&mu_);
      mu_.Await(absl::Condition(
          +[](PgLedgerImpl* l) ABSL_EXCLUSIVE_LOCKS_REQUIRED(l->mu_) {
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
    int64_t last_id = 0, last_seq = 0;
    absl::Status st;
    if (rows > 0) {
      if (writer_db_ == nullptr) {
        // Lost with the last group's error: a new connection per group
        // until the server answers again.
        absl::StatusOr<std::unique_ptr<PgConnection>> db =
            PgConnection::Connect(options_.path);
        if (db.ok()) {
          writer_db_ = *std::move(db);
        } else {
          st = db.status();
        }
      }
      if (st.ok()) st = RunGroup(group, &last_id, &last_seq);
      if (!st.ok()) {
        WriteFailed(st, rows);
        if (writer_db_ != nullptr) {
          if (!writer_db_->Exec("ROLLBACK").ok()) writer_db_.reset();
        }
      }
    }
    const absl::Duration latency = absl::Now() - start;
    std::function<void(absl::Duration, size_t)> observer;
    {
      absl::MutexLock lock(&mu_);
      queued_rows_ -= static_cast<int64_t>(rows);
      if (st.ok() && rows > 0) {
        ++stats_.committed_transactions;
        stats_.committed_rows += static_cast<int64_t>(rows);
        stats_.last_commit_latency = latency;
        written_.score_id = std::max(written_.score_id, last_id);
        written_.outcome_seq = std::max(written_.outcome_seq, last_seq);
      }
      observer = commit_observer_;
    }
    if (st.ok() && rows > 0 && observer) observer(latency, rows);
    for (const auto& job : group) {
      job->status = st.ok() ? job->refused : st;
      if (!st.ok()) {
        for (OutcomeResult& r : job->results) r = OutcomeResult{};
      }
      job->done.Notify();
    }
    if (st.ok() &&
        options_.now() - last_retention_ >= options_.retention_interval) {
      last_retention_ = options_.now();
      ApplyRetention();
    }
  }
}

void PgLedgerImpl::WriteFailed(const absl::Status& st, size_t rows) {
  const absl::string_view reason = WriteFailureReason(st);
  LogEvent(LogLevel::kError, "ledger_write_failed",
           {{"ledger", options_.path},
            {"reason", reason},
            {"rows", absl::StrCat(rows)},
            {"error", st.message()},
            {"effect",
             "the calls get the error; nothing of them is "
             "acknowledged"}});
  absl::MutexLock lock(&mu_);
  ++stats_.write_failures[std::string(reason)];
}

void PgLedgerImpl::ApplyRetention() {
  const absl::Time now = options_.now();
  absl::Status st =
      EnsurePartitions(*writer_db_, now, now + absl::Hours(24 * kDaysAhead));
  if (st.ok() && options_.retention_age != absl::InfiniteDuration()) {
    absl::StatusOr<int> dropped =
        DropPartitionsBefore(*writer_db_, now - options_.retention_age);
    st = dropped.status();
  }
  if (!st.ok()) {
    LogEvent(LogLevel::kError, "ledger_retention_failed",
             {{"ledger", options_.path},
              {"error", st.message()},
              {"effect", "rows past retention stay until a later pass"}});
    absl::MutexLock lock(&mu_);
    ++stats_.retention_failures;
  }
}

absl::Status PgLedgerImpl::EnsureDays(
    std::vector<std::shared_ptr<Job>>& group) {
  // Scores by scored_at (plumbd's clock at scoring; tests may give other
  // times), outcomes by the ledger's clock, so the days are few.
  std::vector<absl::Time> times;
  for (const auto& job : group) {
    for (const ScoreEntry& e : job->scores) times.push_back(e.scored_at);
  }
  times.push_back(options_.now());
  for (absl::Time t : times) {
    const absl::CivilDay day = absl::ToCivilDay(t, absl::UTCTimeZone());
    const int64_t key = day - absl::CivilDay(1970, 1, 1);
    if (days_ready_.contains(key)) continue;
    if (absl::Status st = EnsurePartitions(*writer_db_, t, t); !st.ok()) {
      return st;
    }
    days_ready_.insert(key);
  }
  return absl::OkStatus();
}

absl::StatusOr<SetIds> PgLedgerImpl::IdsOf(const ScoreEntry& e) {
  const std::string key = absl::StrCat(e.set_name, "\x1f", e.set_version,
                                       "\x1f", ScoreRoleName(e.role));
  if (auto it = set_ids_.find(key); it != set_ids_.end()) return it->second;
  std::string layout;
  if (e.layout != nullptr &&
      !google::protobuf::util::MessageToJsonString(*e.layout, &layout).ok()) {
    return absl::InternalError("ledger: cannot print a row layout");
  }
  // Outside the group's transaction (autocommit), so an id kept here never
  // belongs to a transaction that was rolled back. Another replica may
  // insert the same rows at once: ON CONFLICT, then read.
  absl::StatusOr<PgResult> r = writer_db_->Query(
      "WITH n AS (INSERT INTO set_names(name) VALUES ($1)"
      "  ON CONFLICT (name) DO NOTHING),"
      " s AS (INSERT INTO score_sets(set_name, set_version, role, layout)"
      "  VALUES ($1, $2, $3, $4) ON CONFLICT (set_name, set_version, role)"
      "  DO NOTHING)"
      " SELECT 1",
      {e.set_name, e.set_version, std::string(ScoreRoleName(e.role)),
       layout.empty() ? PgValue() : PgValue(layout)});
  if (!r.ok()) return r.status();
  r = writer_db_->Query(
      "SELECT (SELECT id FROM score_sets WHERE set_name = $1 AND"
      "  set_version = $2 AND role = $3),"
      " (SELECT id FROM set_names WHERE name = $1)",
      {e.set_name, e.set_version, std::string(ScoreRoleName(e.role))});
  if (!r.ok()) return r.status();
  if (r->rows.size() != 1 || !r->rows[0][0] || !r->rows[0][1]) {
    return absl::InternalError(
        absl::StrCat("ledger: set '", e.set_name, "' version ", e.set_version,
                     " has no score_sets row after it was inserted"));
  }
  SetIds ids{Int(r->rows[0][0]), Int(r->rows[0][1])};
  set_ids_.emplace(key, ids);
  return ids;
}

absl::StatusOr<std::vector<int64_t>> PgLedgerImpl::Draw(
    absl::string_view sequence, size_t n) {
  std::vector<int64_t> ids;
  if (n == 0) return ids;
  absl::StatusOr<PgResult> r =
      writer_db_->Query(absl::StrCat("SELECT nextval('", sequence,
                                     "') FROM generate_series(1, $1::bigint)"),
                        {absl::StrCat(n)});
  if (!r.ok()) return r.status();
  ids.reserve(n);
  for (const PgRow& row : r->rows) ids.push_back(Int(row[0]));
  // Drawn under the commit-order lock: no other transaction draws between
  // them; sorted so that the group's rows take them in order.
  std::sort(ids.begin(), ids.end());
  return ids;
}

absl::Status PgLedgerImpl::RunGroup(std::vector<std::shared_ptr<Job>>& group,
                                    int64_t* last_id, int64_t* last_seq) {
  if (absl::Status st = EnsureDays(group); !st.ok()) return st;
  for (const auto& job : group) {
    for (const ScoreEntry& e : job->scores) {
      if (absl::StatusOr<SetIds> ids = IdsOf(e); !ids.ok()) {
        return ids.status();
      }
    }
  }
  if (absl::Status st = writer_db_->Exec("BEGIN"); !st.ok()) return st;
  if (absl::Status st = writer_db_
                            ->Query("SELECT pg_advisory_xact_lock($1::bigint)",
                                    {absl::StrCat(kPgCommitOrderLockKey)})
                            .status();
      !st.ok()) {
    return st;
  }
  if (absl::Status st = WriteScores(group, last_id); !st.ok()) return st;
  if (absl::Status st = WriteOutcomes(group, last_seq); !st.ok()) return st;
  if (absl::Status st = writer_db_->Notify(kPgLedgerChannel, ""); !st.ok()) {
    return st;
  }
  return writer_db_->Exec("COMMIT");
}

absl::Status PgLedgerImpl::WriteScores(std::vector<std::shared_ptr<Job>>& group,
                                       int64_t* last_id) {
  // The group's active scores' keys, to find those stored before.
  std::vector<const std::string*> records;
  std::vector<int64_t> names;
  for (const auto& job : group) {
    for (const ScoreEntry& e : job->scores) {
      if (e.role != ScoreRole::kActive) continue;
      records.push_back(&e.record_id);
      names.push_back(set_ids_
                          .at(absl::StrCat(e.set_name, "\x1f", e.set_version,
                                           "\x1f", ScoreRoleName(e.role)))
                          .name_id);
    }
  }
  bool any = false;
  for (const auto& job : group) any = any || !job->scores.empty();
  if (!any) return absl::OkStatus();
  // (record id, name id) -> the score stored or written in this group.
  absl::flat_hash_map<std::pair<std::string, int64_t>, ScoreEntry> known;
  if (!records.empty()) {
    absl::StatusOr<PgResult> r = writer_db_->Query(
        absl::StrCat(
            "SELECT r.record_id, r.primary_set, ss.set_version, ",
            MicrosOf("s.scored_at"),
            ", s.log_odds, s.probability, s.features, ss.id, ss.layout,"
            " ss.set_name FROM score_records r"
            " JOIN scores s ON s.id = r.score_id AND s.scored_at = r.scored_at"
            " JOIN score_sets ss ON ss.id = s.set_id"
            " WHERE (r.record_id, r.primary_set) IN"
            "  (SELECT * FROM unnest($1::text[], $2::bigint[]))"),
        {TextArray(records), IntArray(names)});
    if (!r.ok()) return r.status();
    for (const PgRow& row : r->rows) {
      ScoreEntry stored;
      stored.record_id = Text(row[0]);
      stored.set_name = Text(row[9]);
      stored.set_version = Text(row[2]);
      stored.scored_at = absl::FromUnixMicros(Int(row[3]));
      stored.log_odds = Double(row[4]);
      stored.probability = Double(row[5]);
      absl::StatusOr<std::string> features = FromByteaText(row[6]);
      if (!features.ok()) return features.status();
      stored.features = *std::move(features);
      stored.layout = StoredLayout(Int(row[7]), row[8]);
      known.emplace(std::make_pair(stored.record_id, Int(row[1])),
                    std::move(stored));
    }
  }
  // Decide per job, in queue order: what each writes.
  struct Row {
    const ScoreEntry* e;
    SetIds ids;
  };
  std::vector<Row> rows;
  int64_t repeated = 0, conflicting = 0;
  for (const auto& job : group) {
    if (job->scores.empty()) continue;
    absl::flat_hash_set<std::string> repeats;  // this job's repeated ids
    std::vector<Row> mine;
    std::vector<std::pair<std::string, int64_t>> added;
    for (size_t i = 0; i < job->scores.size(); ++i) {
      const ScoreEntry& e = job->scores[i];
      const SetIds ids = set_ids_.at(absl::StrCat(
          e.set_name, "\x1f", e.set_version, "\x1f", ScoreRoleName(e.role)));
      if (e.role == ScoreRole::kShadow) {
        if (repeats.contains(e.record_id)) {
          job->written[i].repeat = true;
        } else {
          mine.push_back({&e, ids});
        }
        continue;
      }
      auto key = std::make_pair(e.record_id, ids.name_id);
      auto it = known.find(key);
      if (it == known.end()) {
        known.emplace(key, e);
        added.push_back(key);
        mine.push_back({&e, ids});
        continue;
      }
      if (SameFeatures(it->second, e)) {
        repeats.insert(e.record_id);
        job->written[i].repeat = true;
        job->written[i].stored = it->second;
        continue;
      }
      job->refused = RecordConflict(e, it->second);
      break;
    }
    if (!job->refused.ok()) {
      for (const auto& key : added) known.erase(key);
      for (ScoreWrite& w : job->written) w = ScoreWrite{};
      ++conflicting;
      if (options_.ack == LedgerOptions::Ack::kQueued) {
        LogEvent(LogLevel::kError, "ledger_scores_refused",
                 {{"error", job->refused.message()},
                  {"rows", absl::StrCat(job->scores.size())},
                  {"effect",
                   "acknowledged (ack=queued) but not recorded: a record id "
                   "scored before with other features"}});
      }
      continue;
    }
    for (const ScoreWrite& w : job->written) repeated += w.repeat ? 1 : 0;
    rows.insert(rows.end(), mine.begin(), mine.end());
  }
  {
    absl::MutexLock lock(&mu_);
    stats_.repeated_records += repeated;
    stats_.conflicting_records += conflicting;
  }
  if (rows.empty()) return absl::OkStatus();
  absl::StatusOr<std::vector<int64_t>> ids = Draw("scores_id_seq", rows.size());
  if (!ids.ok()) return ids.status();
  std::vector<PgRow> score_rows, record_rows;
  score_rows.reserve(rows.size());
  for (size_t i = 0; i < rows.size(); ++i) {
    const ScoreEntry& e = *rows[i].e;
    const std::string id = absl::StrCat((*ids)[i]);
    const std::string at = PgTime(e.scored_at);
    const bool active = e.role == ScoreRole::kActive;
    score_rows.push_back(
        {id, e.record_id, absl::StrCat(rows[i].ids.set_id), at,
         ExactDouble(e.log_odds), ExactDouble(e.probability),
         ByteaText(e.features),
         active ? PgValue(absl::StrCat(rows[i].ids.name_id)) : PgValue()});
    if (active) {
      record_rows.push_back(
          {e.record_id, absl::StrCat(rows[i].ids.name_id), id, at});
    }
  }
  absl::StatusOr<int64_t> n = writer_db_->CopyIn(
      "COPY scores(id, record_id, set_id, scored_at, log_odds, probability,"
      " features, primary_set) FROM STDIN",
      score_rows);
  if (!n.ok()) return n.status();
  if (!record_rows.empty()) {
    n = writer_db_->CopyIn(
        "COPY score_records(record_id, primary_set, score_id, scored_at)"
        " FROM STDIN",
        record_rows);
    if (!n.ok()) return n.status();
  }
  *last_id = ids->back();
  return absl::OkStatus();
}

absl::Status PgLedgerImpl::WriteOutcomes(
    std::vector<std::shared_ptr<Job>>& group, int64_t* last_seq) {
  std::vector<const std::string*> ids;
  for (const auto& job : group) {
    for (size_t i = 0; i < job->outcomes.size(); ++i) {
      absl::Status invalid = CheckOutcomeEntry(job->outcomes[i]);
      if (!invalid.ok()) {
        job->results[i].status = std::move(invalid);
        continue;
      }
      ids.push_back(&job->outcomes[i].record_id);
    }
  }
  if (ids.empty()) return absl::OkStatus();
  const std::string array = TextArray(ids);
  // Outcomes recorded before (by any replica): record id -> label.
  absl::flat_hash_map<std::string, int> labels;
  absl::StatusOr<PgResult> r = writer_db_->Query(
      "SELECT r.record_id, o.label FROM outcome_records r"
      " JOIN outcomes o ON o.reported_at = r.reported_at AND o.seq = r.seq"
      " WHERE r.record_id = ANY($1::text[])",
      {array});
  if (!r.ok()) return r.status();
  for (const PgRow& row : r->rows) {
    labels[Text(row[0])] = static_cast<int>(Int(row[1]));
  }
  // The records' scores, including this group's (same transaction).
  absl::flat_hash_map<std::string, std::vector<LabelledScore>> scores;
  r = writer_db_->Query(
      absl::StrCat("SELECT s.record_id, ss.set_name, ss.set_version, ss.role,"
                   " s.log_odds, s.probability, ",
                   MicrosOf("s.scored_at"),
                   " FROM scores s JOIN score_sets ss ON ss.id = s.set_id"
                   " WHERE s.record_id = ANY($1::text[])"
                   " AND (s.primary_set IS NOT NULL OR ss.role = 'shadow')"
                   " ORDER BY s.id"),
      {array});
  if (!r.ok()) return r.status();
  for (const PgRow& row : r->rows) {
    LabelledScore l;
    l.record_id = Text(row[0]);
    l.set_name = Text(row[1]);
    l.set_version = Text(row[2]);
    l.role = RoleColumn(Text(row[3]));
    l.log_odds = Double(row[4]);
    l.probability = Double(row[5]);
    l.scored_at = absl::FromUnixMicros(Int(row[6]));
    scores[l.record_id].push_back(std::move(l));
  }
  const absl::Time now = options_.now();
  struct New {
    const OutcomeEntry* o;
    absl::Time observed_at;
  };
  std::vector<New> fresh;
  for (const auto& job : group) {
    for (size_t i = 0; i < job->outcomes.size(); ++i) {
      const OutcomeEntry& o = job->outcomes[i];
      OutcomeResult& result = job->results[i];
      if (!result.status.ok()) continue;
      if (auto it = labels.find(o.record_id); it != labels.end()) {
        if (it->second == o.label) {
          result.repeat = true;
        } else {
          result.status = absl::FailedPreconditionError(absl::StrCat(
              "record '", CallerText(o.record_id), "' already has label ",
              it->second, "; an outcome is recorded once"));
        }
        continue;
      }
      auto found = scores.find(o.record_id);
      if (found == scores.end()) {
        result.status = absl::NotFoundError(
            absl::StrCat("no score with record id '", CallerText(o.record_id),
                         "' in the ledger"));
        continue;
      }
      const absl::Time observed =
          o.observed_at == kNoTime ? now : o.observed_at;
      result.labelled = found->second;
      for (LabelledScore& l : result.labelled) {
        l.label = o.label;
        l.observed_at = observed;
      }
      labels[o.record_id] = o.label;
      fresh.push_back({&o, observed});
    }
  }
  if (fresh.empty()) return absl::OkStatus();
  absl::StatusOr<std::vector<int64_t>> seqs =
      Draw("outcomes_seq_seq", fresh.size());
  if (!seqs.ok()) return seqs.status();
  const std::string reported = PgTime(now);
  std::vector<PgRow> outcome_rows, record_rows;
  for (size_t i = 0; i < fresh.size(); ++i) {
    const std::string seq = absl::StrCat((*seqs)[i]);
    outcome_rows.push_back({fresh[i].o->record_id,
                            absl::StrCat(fresh[i].o->label),
                            PgTime(fresh[i].observed_at), reported, seq});
    record_rows.push_back({fresh[i].o->record_id, seq, reported});
  }
  absl::StatusOr<int64_t> n = writer_db_->CopyIn(
      "COPY outcomes(record_id, label, observed_at, reported_at, seq)"
      " FROM STDIN",
      outcome_rows);
  if (!n.ok()) return n.status();
  n = writer_db_->CopyIn(
      "COPY outcome_records(record_id, seq, reported_at) FROM STDIN",
      record_rows);
  if (!n.ok()) return n.status();
  *last_seq = seqs->back();
  return absl::OkStatus();
}

// ---------------------------------------------------------------- the feed

void PgLedgerImpl::FollowLoop() {
  std::unique_ptr<PgConnection> db;
  for (;;) {
    {
      absl::MutexLock lock(&mu_);
      // Stands still without an observer (see the header).
      mu_.AwaitWithTimeout(
          absl::Condition(
              +[](PgLedgerImpl* l) ABSL_EXCLUSIVE_LOCKS_REQUIRED(l->mu_) {
                return l->follow_stopping_ || l->rows_observer_ != nullptr;
              },
              this),
          absl::Milliseconds(200));
      if (follow_stopping_) return;
      if (rows_observer_ == nullptr) continue;
    }
    if (db == nullptr) {
      absl::StatusOr<std::unique_ptr<PgConnection>> c =
          PgConnection::Connect(options_.path);
      if (c.ok()) {
        db = *std::move(c);
        if (!db->Listen(kPgLedgerChannel).ok()) db.reset();
      }
      if (db == nullptr) {
        absl::SleepFor(absl::Milliseconds(200));
        continue;
      }
    }
    absl::StatusOr<bool> more = FollowRound(*db);
    if (!more.ok()) {
      LogEvent(LogLevel::kWarning, "ledger_follow_failed",
               {{"ledger", options_.path},
                {"error", more.status().message()},
                {"effect", "the monitor's figures wait; retried"}});
      db.reset();
      absl::SleepFor(absl::Milliseconds(200));
      continue;
    }
    if (*more) continue;
    // Caught up: wait for a commit's notification (short, so that a stop
    // or a Flush is not kept waiting; kPgFollowInterval bounds a lost one).
    absl::StatusOr<std::vector<PgNotification>> n = db->WaitForNotification(
        std::min(kPgFollowInterval, absl::Milliseconds(100)));
    if (!n.ok()) db.reset();
  }
}

absl::StatusOr<bool> PgLedgerImpl::FollowRound(PgConnection& db) {
  LedgerMarks from;
  {
    absl::MutexLock lock(&mu_);
    from = marks_;
  }
  // One snapshot for both reads: the marks of a round are a state the
  // ledger was in.
  if (absl::Status st =
          db.Exec("BEGIN ISOLATION LEVEL REPEATABLE READ READ ONLY");
      !st.ok()) {
    return st;
  }
  auto fail = [&db](absl::Status st) -> absl::StatusOr<bool> {
    (void)db.Exec("ROLLBACK");
    return st;
  };
  absl::StatusOr<PgResult> scores = db.Query(
      absl::StrCat("SELECT ", ScoreColumns(),
                   " FROM scores s JOIN score_sets ss ON ss.id = s.set_id"
                   " WHERE s.id > $1::bigint ORDER BY s.id LIMIT $2::bigint"),
      {absl::StrCat(from.score_id), absl::StrCat(kFollowBatch)});
  if (!scores.ok()) return fail(scores.status());
  absl::StatusOr<PgResult> labelled = db.Query(
      absl::StrCat("SELECT ", LabelledColumns(),
                   " FROM (SELECT * FROM outcomes WHERE seq > $1::bigint"
                   "  ORDER BY seq LIMIT $2::bigint) o"
                   " JOIN scores s ON s.record_id = o.record_id"
                   " JOIN score_sets ss ON ss.id = s.set_id"
                   " WHERE (s.primary_set IS NOT NULL OR ss.role = 'shadow')"
                   " ORDER BY o.seq, s.id"),
      {absl::StrCat(from.outcome_seq), absl::StrCat(kFollowBatch)});
  if (!labelled.ok()) return fail(labelled.status());
  // Outcomes whose seq was drawn but that label no score (none exist) do
  // not appear; the mark still moves past the last outcome read.
  absl::StatusOr<PgResult> last_seq = db.Query(
      "SELECT max(seq) FROM (SELECT seq FROM outcomes WHERE seq > $1::bigint"
      " ORDER BY seq LIMIT $2::bigint) o",
      {absl::StrCat(from.outcome_seq), absl::StrCat(kFollowBatch)});
  if (!last_seq.ok()) return fail(last_seq.status());
  if (absl::Status st = db.Exec("COMMIT"); !st.ok()) return st;
  if (scores->rows.empty() && !last_seq->rows[0][0]) return false;

  std::vector<ScoreEntry> score_entries;
  score_entries.reserve(scores->rows.size());
  LedgerMarks to = from;
  for (const PgRow& row : scores->rows) {
    score_entries.push_back(ScoreFromRow(row));
    to.score_id = Int(row[10]);
  }
  std::vector<LabelledScore> labelled_entries;
  labelled_entries.reserve(labelled->rows.size());
  for (const PgRow& row : labelled->rows) {
    labelled_entries.push_back(LabelledFromRow(row));
  }
  if (last_seq->rows[0][0]) to.outcome_seq = Int(last_seq->rows[0][0]);
  CommittedRows rows;
  rows.marks = to;
  for (const ScoreEntry& e : score_entries) rows.scores.push_back(&e);
  for (const LabelledScore& l : labelled_entries) rows.labelled.push_back(&l);
  std::function<void(const CommittedRows&)> observer;
  {
    absl::MutexLock lock(&mu_);
    observer = rows_observer_;
  }
  if (observer) observer(rows);
  {
    absl::MutexLock lock(&mu_);
    marks_ = to;
  }
  return scores->rows.size() >= static_cast<size_t>(kFollowBatch) ||
         (last_seq->rows[0][0] &&
          to.outcome_seq - from.outcome_seq >= kFollowBatch);
}

// ---------------------------------------------------------------- reads

absl::StatusOr<std::unique_ptr<PgLedgerImpl::Reader>>
PgLedgerImpl::BorrowReader() {
  {
    absl::MutexLock lock(&readers_mu_);
    if (!readers_.empty()) {
      auto reader = std::make_unique<Reader>(this, std::move(readers_.back()));
      readers_.pop_back();
      return reader;
    }
  }
  absl::StatusOr<std::unique_ptr<PgConnection>> db =
      PgConnection::Connect(options_.path);
  if (!db.ok()) return db.status();
  return std::make_unique<Reader>(this, *std::move(db));
}

void PgLedgerImpl::ReturnReader(std::unique_ptr<PgConnection> db) {
  absl::MutexLock lock(&readers_mu_);
  if (readers_.size() < kIdleReaders) readers_.push_back(std::move(db));
}

absl::Status PgLedgerImpl::ReadRows(
    absl::string_view sql, std::vector<PgValue> params,
    const std::function<void(const PgRow&)>& row) {
  absl::StatusOr<std::unique_ptr<Reader>> reader = BorrowReader();
  if (!reader.ok()) return reader.status();
  absl::StatusOr<PgResult> r = (**reader)->Query(sql, params);
  if (!r.ok()) {
    (*reader)->Broken();
    return r.status();
  }
  for (const PgRow& x : r->rows) row(x);
  return absl::OkStatus();
}

std::shared_ptr<const v1::RowLayout> PgLedgerImpl::StoredLayout(
    int64_t set_id, const PgValue& json) {
  if (!json || json->empty()) return nullptr;
  absl::MutexLock lock(&layouts_mu_);
  auto it = layouts_.find(set_id);
  if (it != layouts_.end()) return it->second;
  auto layout = std::make_shared<v1::RowLayout>();
  google::protobuf::util::JsonParseOptions strict;
  strict.ignore_unknown_fields = false;
  if (!google::protobuf::util::JsonStringToMessage(*json, layout.get(), strict)
           .ok()) {
    return nullptr;  // its rows read as undecodable
  }
  return layouts_.emplace(set_id, std::move(layout)).first->second;
}

ScoreEntry PgLedgerImpl::ScoreFromRow(const PgRow& r) {
  absl::StatusOr<std::string> features = FromByteaText(r[7]);
  return ScoreEntry{Text(r[0]),
                    Text(r[1]),
                    Text(r[2]),
                    RoleColumn(Text(r[3])),
                    absl::FromUnixMicros(Int(r[4])),
                    Double(r[5]),
                    Double(r[6]),
                    features.ok() ? *std::move(features) : std::string(),
                    StoredLayout(Int(r[8]), r[9])};
}

LabelledScore PgLedgerImpl::LabelledFromRow(const PgRow& r) {
  absl::StatusOr<std::string> features = FromByteaText(r[9]);
  return LabelledScore{Text(r[0]),
                       Text(r[1]),
                       Text(r[2]),
                       RoleColumn(Text(r[3])),
                       Double(r[4]),
                       Double(r[5]),
                       static_cast<int>(Int(r[6])),
                       absl::FromUnixMicros(Int(r[7])),
                       absl::FromUnixMicros(Int(r[8])),
                       features.ok() ? *std::move(features) : std::string(),
                       StoredLayout(Int(r[10]), r[11])};
}

std::string SinceParam(absl::Time since) {
  return since == absl::InfinitePast() ? std::string("-infinity")
                                       : PgTime(since);
}

absl::Status PgLedgerImpl::ReadLabelled(
    const std::string& set_name, int64_t limit, absl::Time since,
    const std::function<void(const LabelledScore&)>& fn,
    const LedgerMarks* upto) {
  return ReadRows(
      absl::StrCat("SELECT ", LabelledColumns(),
                   " FROM outcomes o JOIN scores s ON s.record_id = o.record_id"
                   " JOIN score_sets ss ON ss.id = s.set_id"
                   " WHERE ss.set_name = $1 AND o.observed_at >= $2"
                   " AND (s.primary_set IS NOT NULL OR ss.role = 'shadow')"
                   " AND o.seq <= $4::bigint"
                   " ORDER BY o.observed_at DESC, s.id DESC LIMIT $3::bigint"),
      {set_name, SinceParam(since), absl::StrCat(limit),
       absl::StrCat(upto != nullptr ? upto->outcome_seq : INT64_MAX)},
      [&](const PgRow& r) { fn(LabelledFromRow(r)); });
}

absl::Status PgLedgerImpl::ReadScores(
    const std::string& set_name, int64_t limit, absl::Time since,
    const std::function<void(const ScoreEntry&)>& fn, const LedgerMarks* upto) {
  return ReadRows(
      absl::StrCat(
          "SELECT ", ScoreColumns(),
          " FROM scores s JOIN score_sets ss ON ss.id = s.set_id"
          " WHERE ss.set_name = $1 AND s.scored_at >= $2"
          " AND s.id <= $4::bigint ORDER BY s.id DESC LIMIT $3::bigint"),
      {set_name, SinceParam(since), absl::StrCat(limit),
       absl::StrCat(upto != nullptr ? upto->score_id : INT64_MAX)},
      [&](const PgRow& r) { fn(ScoreFromRow(r)); });
}

absl::Status PgLedgerImpl::ReadScoresAfter(
    int64_t after_id, const std::function<void(const ScoreEntry&)>& fn,
    int64_t upto_id) {
  return ReadRows(
      absl::StrCat("SELECT ", ScoreColumns(),
                   " FROM scores s JOIN score_sets ss ON ss.id = s.set_id"
                   " WHERE s.id > $1::bigint AND s.id <= $2::bigint"
                   " ORDER BY s.id"),
      {absl::StrCat(after_id), absl::StrCat(upto_id)},
      [&](const PgRow& r) { fn(ScoreFromRow(r)); });
}

absl::Status PgLedgerImpl::ReadLabelledAfter(
    int64_t after_seq, const std::function<void(const LabelledScore&)>& fn,
    int64_t upto_seq) {
  return ReadRows(
      absl::StrCat("SELECT ", LabelledColumns(),
                   " FROM outcomes o JOIN scores s ON s.record_id = o.record_id"
                   " JOIN score_sets ss ON ss.id = s.set_id"
                   " WHERE o.seq > $1::bigint AND o.seq <= $2::bigint"
                   " AND (s.primary_set IS NOT NULL OR ss.role = 'shadow')"
                   " ORDER BY o.seq, s.id"),
      {absl::StrCat(after_seq), absl::StrCat(upto_seq)},
      [&](const PgRow& r) { fn(LabelledFromRow(r)); });
}

absl::StatusOr<MarkRecords> PgLedgerImpl::RecordsAt(const LedgerMarks& marks) {
  MarkRecords records;
  absl::Status st = ReadRows(
      "SELECT (SELECT record_id FROM scores WHERE id = $1::bigint),"
      " (SELECT record_id FROM outcomes WHERE seq = $2::bigint)",
      {absl::StrCat(marks.score_id), absl::StrCat(marks.outcome_seq)},
      [&](const PgRow& r) {
        records.score_record = Text(r[0]);
        records.outcome_record = Text(r[1]);
      });
  if (!st.ok()) return st;
  return records;
}

absl::StatusOr<StoredRecord> PgLedgerImpl::FindRecord(
    const std::string& set_name, const std::string& record_id) {
  StoredRecord record;
  absl::Status st = ReadRows(
      absl::StrCat("SELECT ", ScoreColumns(),
                   " FROM scores s JOIN score_sets ss ON ss.id = s.set_id"
                   " WHERE s.record_id = $1 AND ss.set_name = $2"
                   " ORDER BY s.id"),
      {record_id, set_name},
      [&](const PgRow& r) { record.scores.push_back(ScoreFromRow(r)); });
  if (!st.ok()) return st;
  if (record.scores.empty()) {
    return absl::NotFoundError(
        absl::StrCat("set '", set_name, "' has no score with record id '",
                     CallerText(record_id), "' in the ledger"));
  }
  st = ReadRows(absl::StrCat("SELECT o.label, ", MicrosOf("o.observed_at"),
                             ", ", MicrosOf("o.reported_at"),
                             " FROM outcome_records r JOIN outcomes o"
                             " ON o.reported_at = r.reported_at"
                             " AND o.seq = r.seq WHERE r.record_id = $1"),
                {record_id}, [&](const PgRow& r) {
                  record.has_outcome = true;
                  record.label = static_cast<int>(Int(r[0]));
                  record.observed_at = absl::FromUnixMicros(Int(r[1]));
                  record.reported_at = absl::FromUnixMicros(Int(r[2]));
                });
  if (!st.ok()) return st;
  return record;
}

// ---------------------------------------------------------------- misc

LedgerStats PgLedgerImpl::stats() const {
  absl::MutexLock lock(&mu_);
  LedgerStats s = stats_;
  s.queued_rows = queued_rows_;
  return s;
}

void PgLedgerImpl::set_commit_observer(
    std::function<void(absl::Duration, size_t)> fn) {
  absl::MutexLock lock(&mu_);
  commit_observer_ = std::move(fn);
}

void PgLedgerImpl::set_rows_observer(
    std::function<void(const CommittedRows&)> fn) {
  absl::MutexLock lock(&mu_);
  rows_observer_ = std::move(fn);
}

LedgerMarks PgLedgerImpl::Marks() const {
  absl::MutexLock lock(&mu_);
  return marks_;
}

}  // namespace

bool IsPgLedgerUri(absl::string_view where) {
  return absl::StartsWith(where, "postgresql://") ||
         absl::StartsWith(where, "postgres://");
}

absl::StatusOr<std::unique_ptr<Ledger>> PgLedger::Open(LedgerOptions options) {
  if (!IsPgLedgerUri(options.path)) {
    return absl::InvalidArgumentError(
        absl::StrCat("ledger '", options.path, "' is not a postgresql:// URI"));
  }
  if (options.retention_rows != 0) {
    return absl::InvalidArgumentError(
        "ledger.retention_rows is not available with a PostgreSQL ledger: "
        "retention drops whole days of partitions; use retention by age");
  }
  if (options.env != nullptr) {
    return absl::InvalidArgumentError(
        "a PostgreSQL ledger does not use a file environment");
  }
  auto ledger = std::make_unique<PgLedgerImpl>(std::move(options));
  if (absl::Status st = ledger->Start(); !st.ok()) return st;
  return ledger;
}

}  // namespace plumbline::daemon
