// File: daemon/ledger/sqlite_ledger.h
//
// The SQLite backend of the ledger (daemon/ledger/ledger.h): plumbd's SQLite
// database (WAL mode) of every score it returned
// and every outcome reported later, joined by record id. Writes go through a
// single writer thread with a bounded queue and group commit: callers enqueue
// rows and, under the default acknowledgement, wait until the transaction
// holding them has committed, so an RPC that returned OK has its rows on
// disk. A full queue refuses new rows at once with RESOURCE_EXHAUSTED rather
// than growing without bound. The fsync that makes a commit durable and the
// WAL checkpoints run on their own threads (daemon/ledger/wal_io.h), so the
// writer builds the next group while the last one is being synced.
//
//   auto ledger = SqliteLedger::Open(LedgerOptions{.path = "var/ledger.db"});
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
// thread (daemon/ledger/lookup.h), so the writer only inserts; within one
// group commit the scores are written before the outcomes, and the writer
// looks up what the caller did not find, so an outcome queued together with
// its score finds it.
//
// Thread-safe: all public methods may be called from any thread.
#ifndef PLUMBLINE_DAEMON_LEDGER_SQLITE_LEDGER_H_
#define PLUMBLINE_DAEMON_LEDGER_SQLITE_LEDGER_H_

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
#include "daemon/ledger/ledger.h"
#include "daemon/ledger/lock.h"
#include "daemon/ledger/sqlite_db.h"

namespace plumbline::daemon {

class LedgerSetIds;
struct LedgerSetId;
class ScoreLookup;
class WalCheckpointer;
class WalSyncer;

class SqliteLedger final : public Ledger {
 public:
  // Opens or creates the ledger file options.path, applies forward schema
  // migrations and starts the writer. FAILED_PRECONDITION if the file's
  // schema is newer than this build knows.
  static absl::StatusOr<std::unique_ptr<Ledger>> Open(LedgerOptions options);

  // Commits everything queued, then stops the writer.
  ~SqliteLedger() override;

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

  // The schema version this build writes.
  static int SchemaVersion();

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
  struct Job;
  struct Statements;

  explicit SqliteLedger(LedgerOptions options);
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

#endif  // PLUMBLINE_DAEMON_LEDGER_SQLITE_LEDGER_H_
