// File: daemon/history/history_store.h
//
// The model-health history: what the monitor's evaluations found, kept in
// the ledger (table health_history, daemon/ledger/schema.h) so the
// model-health page can draw log-loss, calibration and stability over the
// last days, across restarts. plumbd's ticker hands it every evaluation;
// it writes one row per set version and window at most every `interval`
// (the figures as that evaluation found them: every defined figure of
// policy/figures.h's tables, by metric name, so a figure added there is
// kept without a change here) and deletes rows older than `retention`.
//
// Why a table of evaluations rather than figures recomputed from the
// ledger's scores: the history then shows what plumbd saw and judged at the
// time (the windows, the thresholds' verdict), costs one small row per
// window and interval instead of a pass over days of scores, and survives
// the ledger's own retention of scores.
//
//   auto store = HistoryStore::Open("var/ledger.db", HistoryOptions{});
//   (*store)->Record(monitor.AllHealth());          // each tick
//   auto points = (*store)->Read("courier", absl::Now() - absl::Hours(72));
//
// Bounded: rows <= versions x 2 windows x retention / interval.
// Thread-safe: one connection of its own (WAL: it waits for the ledger's
// writer for at most the busy timeout), guarded by a mutex.
#ifndef PLUMBLINE_DAEMON_HISTORY_HISTORY_STORE_H_
#define PLUMBLINE_DAEMON_HISTORY_HISTORY_STORE_H_

#include <cstdint>
#include <functional>
#include <map>
#include <memory>
#include <string>
#include <vector>

#include "absl/base/thread_annotations.h"
#include "absl/container/flat_hash_map.h"
#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"
#include "absl/synchronization/mutex.h"
#include "absl/time/time.h"
#include "daemon/ledger/sqlite_db.h"
#include "daemon/util/set_version.h"
#include "plumbline/v1/monitor.pb.h"

namespace plumbline::daemon {

struct HistoryOptions {
  // At most one row per set version and window this often.
  absl::Duration interval = absl::Minutes(5);
  // Rows older than this are deleted.
  absl::Duration retention = absl::Hours(14 * 24);
  // The clock; tests pass a fake one.
  std::function<absl::Time()> now = [] { return absl::Now(); };
};

// One recorded window of one evaluation.
struct HistoryPoint {
  absl::Time at;
  std::string version;
  std::string window;  // "count" or "time"
  v1::DriftState state = v1::STEADY;
  int64_t labelled = 0;
  int64_t scored = 0;
  // Defined figures by metric name ("log_loss", "score_psi", ...).
  std::map<std::string, double> figures;
  // Feature -> its defined figures by metric name ("feature_psi", ...).
  std::map<std::string, std::map<std::string, double>> features;
};

class HistoryStore {
 public:
  // Opens a connection to a ledger that SqliteLedger::Open has already
  // migrated.
  static absl::StatusOr<std::unique_ptr<HistoryStore>> Open(
      const std::string& ledger_path, HistoryOptions options);

  // Writes the windows of every evaluated version in `health` whose last
  // row is `interval` old or older (versions never evaluated are skipped),
  // then deletes rows past the retention. Returns the rows written.
  absl::StatusOr<int> Record(const std::vector<v1::SetHealth>& health);

  // The rows of `set` at or after `since`, oldest first.
  absl::StatusOr<std::vector<HistoryPoint>> Read(absl::string_view set,
                                                 absl::Time since);

  const HistoryOptions& options() const { return options_; }

 private:
  HistoryStore(std::unique_ptr<SqliteDb> db, HistoryOptions options)
      : options_(std::move(options)), db_(std::move(db)) {}

  // Constant after construction.
  const HistoryOptions options_;

  absl::Mutex mu_;
  std::unique_ptr<SqliteDb> db_ ABSL_GUARDED_BY(mu_);
  // When each version last got its rows (this process).
  absl::flat_hash_map<SetVersion, absl::Time> last_ ABSL_GUARDED_BY(mu_);
  absl::Time last_retention_ ABSL_GUARDED_BY(mu_) = absl::InfinitePast();
};

// The JSON object of a window's defined figures that a row keeps:
// {"log_loss": 0.31, ..., "features": {"rain_mm": {"feature_psi": 0.2}}}.
std::string FiguresJson(const v1::WindowHealth& window);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_HISTORY_HISTORY_STORE_H_
