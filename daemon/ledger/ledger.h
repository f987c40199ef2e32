// File: daemon/ledger/ledger.h
//
// The ledger: every score plumbd returned and every outcome reported later,
// joined by record id; what the model-health monitor, the refits and
// plumbctl read back. This header is the contract and its row types; two
// backends keep the rows:
//   SqliteLedger (daemon/ledger/sqlite_ledger.h)  one plumbd's SQLite file,
//                                                  the zero-setup default
//   PgLedger (daemon/pg/pg_ledger.h)               a PostgreSQL database that
//                                                  several replicas share
// Writes go through one writer thread per process with a bounded queue and
// group commit: under the default acknowledgement a caller waits until the
// transaction holding its rows has committed, so an RPC that returned OK has
// its rows stored; a full queue refuses new rows at once with
// RESOURCE_EXHAUSTED rather than growing without bound.
//
//   ASSIGN_OR_RETURN(std::unique_ptr<Ledger> ledger,
//                    SqliteLedger::Open({.path = "var/ledger.db"}));
//   absl::Status st = ledger->AppendScores({entry}).status();  // committed
//   auto results = ledger->ReportOutcomes({{"parcel-1", 1, now}});
//
// Acknowledgement (LedgerOptions::ack):
//   kCommitted (default)  AppendScores returns after COMMIT; with
//                         durable_commits (default) the commit is on disk, so
//                         an acknowledged row survives a crash or power loss.
//   kQueued               AppendScores returns once the rows are queued; rows
//                         still queued are lost if the process dies, and an
//                         outcome that races its score may be NOT_FOUND.
// ReportOutcomes always waits for its commit: its per-outcome results depend
// on what is in the ledger. Within one group commit the scores are written
// before the outcomes, so an outcome queued together with its score finds
// it.
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
#include "daemon/util/set_version.h"
#include "daemon/util/time.h"
#include "plumbline/v1/ledger.pb.h"

namespace plumbline::daemon {

class LedgerEnv;  // daemon/ledger/env.h

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
// The ledger's contract, whatever keeps the rows. Every backend gives the
// same guarantees, checked by the same test bodies
// (tests/daemon/ledger/contract.h): all or none per call, nothing
// acknowledged before its commit, one active score per (record id, set),
// one outcome per record id, the rows observer fed in commit order.
class Ledger {
 public:
  virtual ~Ledger() = default;
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
  virtual absl::StatusOr<std::vector<ScoreWrite>> AppendScores(
      std::vector<ScoreEntry> scores) = 0;

  // Records outcomes; one result per outcome, in order. The call itself fails
  // only when the queue is full or the transaction could not commit.
  virtual absl::StatusOr<std::vector<OutcomeResult>> ReportOutcomes(
      std::vector<OutcomeEntry> outcomes) = 0;

  // Calls `fn` with the most recent labelled scores of `set_name` (newest
  // first, by outcome time), at most `limit` of them, observed at or after
  // `since`. Reads on its own connection; sees committed rows only. With
  // `upto`, only rows up to those marks (scores of id <= upto->score_id,
  // outcomes of seq <= upto->outcome_seq or written before schema 8).
  absl::Status ForEachLabelled(
      const std::string& set_name, int64_t limit, absl::Time since,
      const std::function<void(const LabelledScore&)>& fn,
      const LedgerMarks* upto = nullptr) {
    return ReadLabelled(set_name, limit, since, fn, upto);
  }

  // Calls `fn` with the most recent scores of `set_name`, newest first.
  absl::Status ForEachScore(const std::string& set_name, int64_t limit,
                            absl::Time since,
                            const std::function<void(const ScoreEntry&)>& fn,
                            const LedgerMarks* upto = nullptr) {
    return ReadScores(set_name, limit, since, fn, upto);
  }

  // Every score of `record_id` by set `set_name` (any version and role) and
  // its outcome. NOT_FOUND when there is no such score. Reads on its own
  // connection; sees committed rows only.
  virtual absl::StatusOr<StoredRecord> FindRecord(
      const std::string& set_name, const std::string& record_id) = 0;

  virtual LedgerStats stats() const = 0;

  // Rows the queue holds at most (LedgerOptions::queue_capacity_rows).
  virtual size_t queue_capacity_rows() const = 0;

  // Called by the writer after every commit with its latency and row count
  // (for metrics). Set before the first write; must be thread-safe.
  virtual void set_commit_observer(
      std::function<void(absl::Duration, size_t)> fn) = 0;

  // Called on the writer thread with the rows of every group, in commit
  // order, right after its COMMIT and before any of its callers is answered
  // (with durable_commits, before its fsync: a reader may see a commit that
  // much earlier, see daemon/ledger/wal_io.h). The model-health monitor is
  // fed this way, so what it holds is always exactly the ledger up to
  // Marks(). It runs on the writer's critical path: keep it to
  // per-record arithmetic. Set before the first write.
  virtual void set_rows_observer(
      std::function<void(const CommittedRows&)> fn) = 0;

  // The marks of everything committed so far.
  virtual LedgerMarks Marks() const = 0;

  // Returns once every row queued before the call is committed (and its
  // group told to the rows observer), with the error of that commit if it
  // failed.
  virtual absl::Status Flush() = 0;

  // Calls `fn` with every score of id in (after_id, upto_id] (any set,
  // version and role), in id order; and with every labelled score whose
  // outcome has a seq in (after_seq, upto_seq], in seq order (outcomes
  // written before schema 8 have no seq and are never after a mark). Each
  // reads on its own connection and sees committed rows only.
  absl::Status ForEachScoreAfter(
      int64_t after_id, const std::function<void(const ScoreEntry&)>& fn,
      int64_t upto_id = INT64_MAX) {
    return ReadScoresAfter(after_id, fn, upto_id);
  }
  absl::Status ForEachLabelledAfter(
      int64_t after_seq, const std::function<void(const LabelledScore&)>& fn,
      int64_t upto_seq = INT64_MAX) {
    return ReadLabelledAfter(after_seq, fn, upto_seq);
  }

  // The record ids of the score with id marks.score_id and of the outcome
  // with seq marks.outcome_seq, to check that a pair of marks still means
  // the rows it meant (an id is reused only when every row above it was
  // deleted).
  virtual absl::StatusOr<MarkRecords> RecordsAt(const LedgerMarks& marks) = 0;

 protected:
  Ledger() = default;

  // The reads behind ForEachLabelled, ForEachScore, ForEachScoreAfter and
  // ForEachLabelledAfter (virtual functions take no default arguments).
  virtual absl::Status ReadLabelled(
      const std::string& set_name, int64_t limit, absl::Time since,
      const std::function<void(const LabelledScore&)>& fn,
      const LedgerMarks* upto) = 0;
  virtual absl::Status ReadScores(
      const std::string& set_name, int64_t limit, absl::Time since,
      const std::function<void(const ScoreEntry&)>& fn,
      const LedgerMarks* upto) = 0;
  virtual absl::Status ReadScoresAfter(
      int64_t after_id, const std::function<void(const ScoreEntry&)>& fn,
      int64_t upto_id) = 0;
  virtual absl::Status ReadLabelledAfter(
      int64_t after_seq, const std::function<void(const LabelledScore&)>& fn,
      int64_t upto_seq) = 0;
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_LEDGER_LEDGER_H_
