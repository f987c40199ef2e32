// File: daemon/ledger/lookup.h
//
// Finding the scores an outcome labels. Every reported outcome needs them:
// they say whether its record exists (NOT_FOUND otherwise) and they are what
// the monitor's windows learn from. A lookup costs about as much as storing
// the outcome, so the ledger does it on the caller's thread, on a read
// connection of its own (WAL mode: readers see the last commit and neither
// wait for nor hold up the writer), and its single writer thread only
// inserts. ScoreLookup keeps a small pool of such connections with their
// statements prepared; several RPC threads look up at once, one read
// transaction and one statement per batch, and the set names come from a
// cache of score_sets instead of a join.
//
// The writer uses FindScores on its own connection for what a caller did
// not find (a score queued in the same group commit as its outcome), so the
// answer is the same as if the writer had looked everything up itself.
//
// Thread-safe.
#ifndef PLUMBLINE_DAEMON_LEDGER_LOOKUP_H_
#define PLUMBLINE_DAEMON_LEDGER_LOOKUP_H_

#include <memory>
#include <string>
#include <vector>

#include "absl/base/thread_annotations.h"
#include "absl/container/flat_hash_map.h"
#include "absl/status/status.h"
#include "absl/status/statusor.h"
#include "absl/synchronization/mutex.h"
#include "daemon/ledger/ledger.h"
#include "daemon/ledger/sqlite_db.h"

namespace plumbline::daemon {

// The statement FindScores steps: the scores of record ?1 in id order, with
// their set, version and role. The features are left out: the monitor does
// not use them, refits read them with Ledger::ForEachLabelled.
extern const char kFindScoresSql[];

// Appends the scores of `record_id` (as read by `find`, prepared from
// kFindScoresSql) to `out`, with label `label`; observed_at is left for the
// caller. Returns whether any was found.
absl::StatusOr<bool> FindScores(SqliteStatement& find,
                                const std::string& record_id, int label,
                                std::vector<LabelledScore>& out);

class ScoreLookup {
 public:
  // Connections open lazily, on the ledger file at `path`.
  // `env` must outlive the lookup.
  ScoreLookup(std::string path, LedgerEnv* env);
  ~ScoreLookup();
  ScoreLookup(const ScoreLookup&) = delete;
  ScoreLookup& operator=(const ScoreLookup&) = delete;

  // For every outcome i with wanted[i] set, fills results[i].labelled with
  // its scores and sets found[i] when there are any; all in one read
  // transaction. An error (the file unreadable, SQLite busy) leaves the
  // wanted entries empty and unfound: it means "not looked up", never "not
  // found".
  absl::Status Find(const std::vector<OutcomeEntry>& outcomes,
                    const std::vector<uint8_t>& wanted,
                    std::vector<OutcomeResult>& results,
                    std::vector<uint8_t>& found);

 private:
  struct Reader;
  struct SetNames {
    std::string name, version;
    ScoreRole role = ScoreRole::kActive;
  };
  absl::StatusOr<std::unique_ptr<Reader>> Acquire();
  void Release(std::unique_ptr<Reader> reader);
  // Reads score_sets into sets_ (within `r`'s read transaction).
  absl::Status LoadSets(Reader& r);

  const std::string path_;
  LedgerEnv* const env_;
  absl::Mutex mu_;
  std::vector<std::unique_ptr<Reader>> idle_ ABSL_GUARDED_BY(mu_);
  // score_sets as committed. A row never changes once committed (retention
  // keeps them), so the cache only grows.
  absl::flat_hash_map<int64_t, SetNames> sets_ ABSL_GUARDED_BY(mu_);
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_LEDGER_LOOKUP_H_
