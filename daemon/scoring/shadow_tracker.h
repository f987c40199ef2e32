// File: daemon/scoring/shadow_tracker.h
//
// How each shadow version fares. A shadow scores every call of its set's
// active version but never fails it: a call the shadow cannot score (a
// feature it does not know, a level it refuses, ...) leaves no shadow score.
// ShadowTracker counts such failures by reason (the status code's name),
// remembers the last error, and stops a shadow after `limit` consecutive
// failures: Record returns kStop once, the caller then stops scoring it and
// asks the lifecycle to retire it (plumbd logs event=shadow_stopped and
// the audit says why). A success resets the run.
//
//   ShadowTracker tracker(100);
//   if (tracker.Record({"courier", "v9"}, status) == ShadowTracker::kStop) ...
//   for (const auto& [key, s] : tracker.Snapshot()) ...   // metrics, versions
//
// Thread-safe: every method may be called from any thread.
#ifndef PLUMBLINE_DAEMON_SCORING_SHADOW_TRACKER_H_
#define PLUMBLINE_DAEMON_SCORING_SHADOW_TRACKER_H_

#include <cstdint>
#include <map>
#include <string>

#include "absl/base/thread_annotations.h"
#include "absl/container/flat_hash_map.h"
#include "absl/status/status.h"
#include "absl/synchronization/mutex.h"
#include "daemon/util/set_version.h"

namespace plumbline::daemon {

struct ShadowStats {
  int64_t scored_calls = 0;
  // Failed calls by reason: "invalid_argument", "failed_precondition", ...
  std::map<std::string, int64_t> failures;
  int64_t consecutive_failures = 0;
  std::string last_error;  // "" until the first failure
  bool stopped = false;
};

class ShadowTracker {
 public:
  // `limit` consecutive failures stop a shadow; 0 never stops one.
  explicit ShadowTracker(int64_t limit) : limit_(limit) {}

  enum Verdict { kKeep, kStop };

  // Counts one call scored by the shadow (OK) or failed (`status`).
  // kStop exactly once: when the failure that reaches the limit is counted.
  Verdict Record(const SetVersion& shadow, const absl::Status& status);

  // Whether the shadow has been stopped.
  bool Stopped(const SetVersion& shadow) const;

  // Every shadow seen so far.
  std::map<SetVersion, ShadowStats> Snapshot() const;
  // One shadow's stats (zeros when never seen).
  ShadowStats Of(const SetVersion& shadow) const;

  int64_t limit() const { return limit_; }

 private:
  const int64_t limit_;
  mutable absl::Mutex mu_;
  absl::flat_hash_map<SetVersion, ShadowStats> stats_ ABSL_GUARDED_BY(mu_);
};

// "invalid_argument" for INVALID_ARGUMENT, and so on: a metric label.
std::string StatusCodeLabel(absl::StatusCode code);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_SCORING_SHADOW_TRACKER_H_
