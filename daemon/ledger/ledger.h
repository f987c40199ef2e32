// File: daemon/ledger/ledger.h
//
// The ledger: plumbd's SQLite database (WAL mode) of every score it returned
// and every outcome reported later, joined by record id. Writes go through a
// single writer thread with a bounded queue and group commit: callers enqueue
// rows and, under the default acknowledgement, wait until the transaction
// holding them has committed, so an RPC that returned OK has its rows on
// disk. A full queue refuses new rows at once with RESOURCE_EXHAUSTED rather
// than growing without bound. The fsync that makes a commit durable and the
// WAL checkpoints run on their own threads (daemon/wal_io.h), so the writer
// builds the next group while the last one is being synced.
//
//   auto ledger = Ledger::Open(LedgerOptions{.path = "var/ledger.db"});
//   absl::Status st = (*ledger)->AppendScores({entry});        // committed
//   auto results = (*ledger)->ReportOutcomes({{"parcel-1", 1, now}});
//
// Acknowledgement (LedgerOptions::ack):
//   kCommitted (default)  AppendScores returns after COMMIT; with
//                         durable_commits (default) the WAL is fsynced, so an
//                         acknowledged row survives a crash or power loss.
//   kQueued               AppendScores returns once the rows are queued; rows
//                         still queued are lost if the process dies, and an
//                         outcome that races its score may be NOT_FOUND.
// ReportOutcomes always waits for its commit: its per-outcome results depend
// on what is in the ledger. It looks up the outcomes' scores on the calling
// thread (daemon/ledger_lookup.h), so the writer only inserts; within one
// group commit the scores are written before the outcomes, and the writer
// looks up what the caller did not find, so an outcome queued together with
// its score finds it.
//
// Thread-safe: all public methods may be called from any thread.
#ifndef PLUMBLINE_DAEMON_LEDGER_LEDGER_H_
#define PLUMBLINE_DAEMON_LEDGER_LEDGER_H_

#include <atomic>
#include <cstdint>
#include <deque>
#include <functional>
#include <map>
#include <memory>
#include <string>
#include <thread>
#include <vector>

#include "absl/base/thread_annotations.h"
#include "absl/container/flat_hash_map.h"
#include "absl/status/status.h"
#include "absl/status/statusor.h"
#include "absl/synchronization/mutex.h"
#include "absl/time/time.h"
#include "daemon/ledger/lock.h"
#include "daemon/ledger/sqlite_db.h"
#include "daemon/util/set_version.h"
#include "daemon/util/time.h"
#include "plumbline/v1/ledger.pb.h"

namespace plumbline::daemon {

class LedgerSetIds;
struct LedgerSetId;
class ScoreLookup;
class WalCheckpointer;
class WalSyncer;

struct LedgerOptions {
  // SQLite file; its directory is created if missing. Open takes the lock
  // of daemon/ledger/lock.h ("<path>.lock") for as long as the ledger is
  // open: one writer per ledger.
  std::string path = "./var/ledger.db";
  // What the lock file says about this writer besides pid, host and start
  // time (plumbd: its listen address).
  std::string holder_note;
  // Every file access of the ledger goes through it (daemon/ledger/env.h);
  // null: LedgerEnv::Default(). Must outlive the ledger.
  LedgerEnv* env = nullptr;
  // Rows (scores + outcomes) that may wait for the writer; beyond this new
  // writes get RESOURCE_EXHAUSTED.
  size_t queue_capacity_rows = 200000;
  // Most rows one transaction takes (group commit).
  size_t max_group_rows = 50000;
  enum class Ack { kCommitted, kQueued };
  // When AppendScores returns; see the file comment. Safe choice first.
  Ack ack = Ack::kCommitted;
  // true: a commit is acknowledged after the WAL is fsynced (what
  // synchronous=FULL does, done by WalSyncer off the writer thread): durable
  // on power loss. false: synchronous=NORMAL alone, durable when the process
  // dies, may lose the last commits on power loss.
  bool durable_commits = true;
  // Scores older than this (and their outcomes) are deleted; infinite keeps
  // all.
  absl::Duration retention_age = absl::InfiniteDuration();
  // Keep at most this many scores (oldest deleted first); 0 keeps all.
  int64_t retention_rows = 0;
  // How often the writer applies retention.
  absl::Duration retention_interval = absl::Minutes(1);
  // Clock for retention and for outcomes without an observed time.
  std::function<absl::Time()> now = [] { return absl::Now(); };
};

// One score as plumbd returned it.
struct ScoreEntry {
  std::string record_id;
  std::string set_name;
  std::string set_version;
  ScoreRole role = ScoreRole::kActive;
  absl::Time scored_at;
  double log_odds = 0;
  double probability = 0;
  // The feature values as received: packed in the order of the version
  // that scored them (daemon/scoring/packed_row.h), or, for rows of
  // schema < 7, a JSON object. Read them with StoredFeatureReader.
  std::string features;
  // Writing: the layout of `set_version` (LayoutOf its plan), stored once
  // per (set, version, role). Reading: the layout the row was written
  // under (null for a JSON row); owned by the ledger, lives as long as it.
  std::shared_ptr<const v1::RowLayout> layout;
};

// What AppendScores did with one score.
struct ScoreWrite {
  // True when this set had already recorded a score under this record id
  // with the same features (a retry): nothing new was written, and for an
  // active-role score `stored` holds the score recorded then (version,
  // time, log-odds, probability, features). A repeat's shadow scores are
  // repeats too (stored left empty).
  bool repeat = false;
  ScoreEntry stored;
};

struct OutcomeEntry {
  std::string record_id;
  int label = 0;
  // kNoTime: when the ledger records it.
  absl::Time observed_at = kNoTime;
};

// A score joined to its outcome.
struct LabelledScore {
  std::string record_id;
  std::string set_name;
  std::string set_version;
  ScoreRole role = ScoreRole::kActive;
  double log_odds = 0;
  double probability = 0;
  int label = 0;
  absl::Time scored_at;
  absl::Time observed_at;
  // As ScoreEntry's.
  std::string features;
  std::shared_ptr<const v1::RowLayout> layout;
};

// Everything the ledger holds of one record of a set (Ledger::FindRecord).
struct StoredRecord {
  // Oldest first; features and layout as ForEachScore gives them.
  std::vector<ScoreEntry> scores;
  bool has_outcome = false;
  int label = 0;
  absl::Time observed_at;
  absl::Time reported_at;
};

struct OutcomeResult {
  // OK (new or identical repeat), NOT_FOUND (no score with that id),
  // FAILED_PRECONDITION (a different label was already recorded),
  // INVALID_ARGUMENT (label not 0/1, empty id).
  absl::Status status;
  // True when the same label had already been recorded (nothing changed).
  bool repeat = false;
  // For a new outcome: the scores of that record it now labels (without
  // their features, which the monitor does not need; refits read them
  // with Ledger::ForEachLabelled).
  std::vector<LabelledScore> labelled;
};

// How far the ledger's committed rows go: the highest score id and the
// highest outcome seq committed (0: none yet). Scores' ids and outcomes'
// seqs grow in the order the writer commits them, so a reader that has
// seen every row up to a pair of marks needs only the rows after them.
struct LedgerMarks {
  int64_t score_id = 0;
  int64_t outcome_seq = 0;
  friend bool operator==(const LedgerMarks& a, const LedgerMarks& b) {
    return a.score_id == b.score_id && a.outcome_seq == b.outcome_seq;
  }
};

// What one group commit added, for Ledger::set_rows_observer: the scores
// written (not repeats, not those of a refused job) in id order, and the
// scores that the group's new outcomes label, in seq order. The pointers
// are valid during the call only.
struct CommittedRows {
  std::vector<const ScoreEntry*> scores;
  std::vector<const LabelledScore*> labelled;
  // The ledger's marks with this group in.
  LedgerMarks marks;
};

// The record ids stored at a pair of marks (Ledger::RecordsAt); empty when
// no such row is stored (deleted by retention, or never written).
struct MarkRecords {
  std::string score_record;
  std::string outcome_record;
};

struct LedgerStats {
  int64_t queued_rows = 0;
  int64_t committed_transactions = 0;
  int64_t committed_rows = 0;
  absl::Duration last_commit_latency;
  // Retention passes that failed (logged as event=ledger_retention_failed;
  // rows past retention stay until a later pass succeeds).
  int64_t retention_failures = 0;
  // Scores not written because the same record id and set had been
  // recorded with the same features (retries); and calls refused because a
  // record id had been recorded with other features.
  int64_t repeated_records = 0;
  int64_t conflicting_records = 0;
  // Groups that failed to commit (or to sync), by reason: "disk_full",
  // "unavailable" (I/O error, locked, file lost), "corrupt", "other".
  std::map<std::string, int64_t> write_failures;
  // Whether the ledger has stopped taking writes for good (an fsync that
  // failed, the file deleted or replaced); plumbd must be restarted.
  bool failed = false;
};

class Ledger {
 public:
  // Opens or creates the ledger, applies forward schema migrations and starts
  // the writer. FAILED_PRECONDITION if the file's schema is newer than this
  // build knows.
  static absl::StatusOr<std::unique_ptr<Ledger>> Open(LedgerOptions options);

  // Commits everything queued, then stops the writer.
  ~Ledger();
  Ledger(const Ledger&) = delete;
  Ledger& operator=(const Ledger&) = delete;

  // Records scores, all or none; one ScoreWrite per score, in order.
  // A record id names one record of a set: one active-role score per
  // (record id, set) within retention (shadow scores share their record's
  // id). A score whose id and set were recorded before with the same
  // features is a repeat (nothing written, the stored score returned); with
  // other features the call fails ALREADY_EXISTS naming the id and writes
  // nothing. INVALID_ARGUMENT for an empty record id; RESOURCE_EXHAUSTED
  // when the queue is full; the error of the transaction when it failed to
  // commit (nothing was acknowledged). With ack=queued the answer comes
  // before the writer has run: no repeat is reported, and a conflict is
  // logged (event=ledger_scores_refused) and counted, not returned.
  absl::StatusOr<std::vector<ScoreWrite>> AppendScores(
      std::vector<ScoreEntry> scores);

  // Records outcomes; one result per outcome, in order. The call itself fails
  // only when the queue is full or the transaction could not commit.
  absl::StatusOr<std::vector<OutcomeResult>> ReportOutcomes(
      std::vector<OutcomeEntry> outcomes);

  // Calls `fn` with the most recent labelled scores of `set_name` (newest
  // first, by outcome time), at most `limit` of them, observed at or after
  // `since`. Reads on its own connection; sees committed rows only. With
  // `upto`, only rows up to those marks (scores of id <= upto->score_id,
  // outcomes of seq <= upto->outcome_seq or written before schema 8).
  absl::Status ForEachLabelled(
      const std::string& set_name, int64_t limit, absl::Time since,
      const std::function<void(const LabelledScore&)>& fn,
      const LedgerMarks* upto = nullptr);

  // Calls `fn` with the most recent scores of `set_name`, newest first.
  absl::Status ForEachScore(const std::string& set_name, int64_t limit,
                            absl::Time since,
                            const std::function<void(const ScoreEntry&)>& fn,
                            const LedgerMarks* upto = nullptr);

  // Every score of `record_id` by set `set_name` (any version and role) and
  // its outcome. NOT_FOUND when there is no such score. Reads on its own
  // connection; sees committed rows only.
  absl::StatusOr<StoredRecord> FindRecord(const std::string& set_name,
                                          const std::string& record_id);

  LedgerStats stats() const;

  // Rows the queue holds at most (LedgerOptions::queue_capacity_rows).
  size_t queue_capacity_rows() const { return options_.queue_capacity_rows; }

  // Called by the writer after every commit with its latency and row count
  // (for metrics). Set before the first write; must be thread-safe.
  void set_commit_observer(std::function<void(absl::Duration, size_t)> fn);

  // Called on the writer thread with the rows of every group, in commit
  // order, right after its COMMIT and before any of its callers is answered
  // (with durable_commits, before its fsync: a reader may see a commit that
  // much earlier, see daemon/ledger/wal_io.h). The model-health monitor is
  // fed this way, so what it holds is always exactly the ledger up to
  // Marks(). It runs on the writer's critical path: keep it to
  // per-record arithmetic. Set before the first write.
  void set_rows_observer(std::function<void(const CommittedRows&)> fn);

  // The marks of everything committed so far.
  LedgerMarks Marks() const;

  // Returns once every row queued before the call is committed (and its
  // group told to the rows observer), with the error of that commit if it
  // failed.
  absl::Status Flush();

  // Calls `fn` with every score of id in (after_id, upto_id] (any set,
  // version and role), in id order; and with every labelled score whose
  // outcome has a seq in (after_seq, upto_seq], in seq order (outcomes
  // written before schema 8 have no seq and are never after a mark). Each
  // reads on its own connection and sees committed rows only.
  absl::Status ForEachScoreAfter(
      int64_t after_id, const std::function<void(const ScoreEntry&)>& fn,
      int64_t upto_id = INT64_MAX);
  absl::Status ForEachLabelledAfter(
      int64_t after_seq, const std::function<void(const LabelledScore&)>& fn,
      int64_t upto_seq = INT64_MAX);

  // The record ids of the score with id marks.score_id and of the outcome
  // with seq marks.outcome_seq, to check that a pair of marks still means
  // the rows it meant (an id is reused only when every row above it was
  // deleted).
  absl::StatusOr<MarkRecords> RecordsAt(const LedgerMarks& marks);

  // The schema version this build writes.
  static int SchemaVersion();

 private:
  struct Job;
  struct Statements;

  explicit Ledger(LedgerOptions options);
  absl::Status Enqueue(const std::shared_ptr<Job>& job);
  void WriterLoop();
  // Writes and commits `group`; `marks` gets the ledger's marks with it in.
  absl::Status RunGroup(std::vector<std::shared_ptr<Job>>& group,
                        LedgerMarks* marks);
  // Inserts the group's scores; the jobs' `written` and `refused` say how.
  absl::Status WriteScores(std::vector<std::shared_ptr<Job>>& group);
  // One job's scores row by row (some (record id, set) was there before),
  // `ids` its scores' set ids.
  absl::Status WriteJobScores(Job& job, const LedgerSetId* ids);
  // The layout stored with score_sets row `set_id` (`json`: its layout
  // column; empty for rows of schema < 7), parsed once and kept for the
  // ledger's life; null when there is none. Thread-safe.
  std::shared_ptr<const v1::RowLayout> StoredLayout(int64_t set_id,
                                                    absl::string_view json);
  // A result row of reads.cc's score / labelled columns as an entry.
  ScoreEntry ScoreFromRow(const SqliteStatement& s);
  LabelledScore LabelledFromRow(const SqliteStatement& s);
  // OK, or why the ledger stopped taking writes.
  absl::Status Failure() const;
  // Stops taking writes for good (this process), logging why once.
  void Fail(const absl::Status& cause);
  // UNAVAILABLE (and Fail) if the ledger's path no longer names the file
  // the writer opened (deleted, or replaced by another file).
  absl::Status CheckFile();
  // Logs and counts a group that failed to commit or sync.
  void WriteFailed(const absl::Status& st, size_t rows);
  // Counts a group's commit (when `st` is OK) and acknowledges its jobs.
  void Finish(const std::vector<std::shared_ptr<Job>>& group, absl::Status st,
              absl::Time start, size_t rows);
  // After a group's COMMIT: moves marks_ to `marks` and tells the rows
  // observer what the group wrote. Writer thread.
  void Committed(const std::vector<std::shared_ptr<Job>>& group,
                 const LedgerMarks& marks);
  // INVALID_ARGUMENT when `o` can never be stored (empty id, label not 0/1).
  static absl::Status CheckOutcome(const OutcomeEntry& o);
  // Stores the group's outcomes (after its scores), looking up the scores
  // the callers did not find.
  absl::Status WriteOutcomes(std::vector<std::shared_ptr<Job>>& group);
  // Runs the single-row insert bound for `o`; on a conflict, a repeat or
  // FAILED_PRECONDITION in `result`.
  absl::Status InsertOutcome(const OutcomeEntry& o, OutcomeResult& result);
  absl::Status ApplyRetention();
  // SQLite's WAL hook on the writer connection (after each commit, with the
  // WAL's size in pages): asks for checkpoints.
  static int OnWalCommit(void* ledger, sqlite3* db, const char* name,
                         int frames);

  // Constant after Open.
  const LedgerOptions options_;
  LedgerEnv* const env_;                   // options_.env or the default
  std::unique_ptr<LedgerLock> lock_;       // released last
  std::unique_ptr<SqliteDb> writer_db_;    // used by the writer thread only
  std::unique_ptr<Statements> stmts_;      // writer thread only
  std::unique_ptr<LedgerSetIds> set_ids_;  // writer thread only
  std::unique_ptr<ScoreLookup> lookup_;    // thread-safe
  // Both thread-safe; syncer_ is null unless durable_commits.
  std::unique_ptr<WalCheckpointer> checkpointer_;
  std::unique_ptr<WalSyncer> syncer_;
  std::function<void(absl::Duration, size_t)> commit_observer_;
  std::function<void(const CommittedRows&)> rows_observer_;

  mutable absl::Mutex mu_;
  std::deque<std::shared_ptr<Job>> queue_ ABSL_GUARDED_BY(mu_);
  int64_t queued_rows_ ABSL_GUARDED_BY(mu_) = 0;
  bool stopping_ ABSL_GUARDED_BY(mu_) = false;
  LedgerStats stats_ ABSL_GUARDED_BY(mu_);
  absl::Status failed_ ABSL_GUARDED_BY(mu_);  // OK while healthy
  LedgerMarks marks_ ABSL_GUARDED_BY(mu_);

  // Layouts by score_sets id (StoredLayout); entries are never removed.
  absl::Mutex layouts_mu_;
  absl::flat_hash_map<int64_t, std::shared_ptr<const v1::RowLayout>> layouts_
      ABSL_GUARDED_BY(layouts_mu_);

  // Retention passes run so far (written by the writer after each pass).
  std::atomic<int64_t> retention_passes_{0};

  // Writer thread only.
  absl::Time last_retention_ = absl::InfinitePast();
  int wal_frames_ = 0;  // the WAL's size after the last commit
  // The seq of the last outcome written (committed or in the open group).
  int64_t outcome_seq_ = 0;
  // Device and inode of the ledger file at Open (constant after Open).
  uint64_t file_dev_ = 0, file_ino_ = 0;

  std::thread writer_;
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_LEDGER_LEDGER_H_
