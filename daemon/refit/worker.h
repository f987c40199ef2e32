// File: daemon/refit/worker.h
//
// Runs refit jobs (daemon/refit_job.h) on one thread of their own, off the
// request path and at nice 10, one at a time, and decides when the drift policy
// or the schedule starts one:
//   - drift: after each evaluation, a set whose active version is in state
//     `drifting` gets a job unless mode is OFF, a job for it is queued or
//     running, or its last job (of any kind) ended less than `cooldown` ago,
//     or (min_new_labelled > 0) fewer than min_new_labelled outcomes have
//     labelled the version since the first evaluation that found it drifting
//     after the set's last job ended (SetHealth.labelled_since_start);
//   - the drift's onset: when an evaluation first finds the active version
//     in `watch` or `drifting`, the change began after the last evaluation
//     that found it steady; that evaluation's evaluated_at (or the first
//     unsteady one's, when none was steady) is the onset a drift job carries
//     (RefitTrigger::drift_onset) until the version is `steady` again;
//   - schedule: with schedule > 0, every set gets a job `schedule` after
//     plumbd started and after each of its scheduled jobs (mode OFF: none);
//   - neither drift nor schedule starts a job while the set has a refit
//     candidate waiting for approval (RefitRunner::HasWaitingCandidate);
//   - manual: RunNow from the Registry service (plumbctl refit), any mode;
//     it waits for its job's outcome.
// Each finished job increments plumbline_refit_jobs_total{set, result}.
//
//   RefitWorker worker(&runner, &exporter->registry());
//   worker.OnEvaluated(monitor->AllHealth());       // from the ticker thread
//   RefitOutcome o = worker.RunNow({.set = "courier"});  // kManual
//
// Thread-safe: every method may be called from any thread.
#ifndef PLUMBLINE_DAEMON_REFIT_WORKER_H_
#define PLUMBLINE_DAEMON_REFIT_WORKER_H_

#include <cstdint>
#include <deque>
#include <functional>
#include <memory>
#include <optional>
#include <string>
#include <thread>
#include <vector>

#include "absl/base/thread_annotations.h"
#include "absl/container/flat_hash_map.h"
#include "absl/container/flat_hash_set.h"
#include "absl/synchronization/mutex.h"
#include "absl/time/time.h"
#include "daemon/refit/job.h"
#include "daemon/util/set_version.h"
#include "plumbline/v1/monitor.pb.h"
#include "prometheus/counter.h"
#include "prometheus/family.h"
#include "prometheus/registry.h"

namespace plumbline::daemon {

class RefitWorker {
 public:
  // `runner` must outlive the worker; `metrics` may be null (no metric).
  RefitWorker(
      RefitRunner* runner, prometheus::Registry* metrics,
      std::function<absl::Time()> now = [] { return absl::Now(); });
  // Finishes the running job, drops queued ones, joins the thread.
  ~RefitWorker();

  RefitWorker(const RefitWorker&) = delete;
  RefitWorker& operator=(const RefitWorker&) = delete;

  // Starts drift- and schedule-triggered jobs as the file comment says.
  // `health`: the last evaluation of every monitored version;
  // `active_versions_by_set`: the active version of each set.
  // Returns how many jobs it queued.
  int OnEvaluated(const std::vector<v1::SetHealth>& health,
                  const std::vector<SetVersion>& active_versions_by_set);

  // Queues a job and waits for its outcome.
  RefitOutcome RunNow(RefitTrigger trigger);

  // Jobs finished so far (tests).
  int64_t finished() const;

 private:
  struct Job {
    RefitTrigger trigger;
    int64_t id = 0;
    bool done = false;
    RefitOutcome outcome;
  };

  std::shared_ptr<Job> Enqueue(RefitTrigger trigger)
      ABSL_EXCLUSIVE_LOCKS_REQUIRED(mu_);
  void Loop();

  RefitRunner* const runner_;
  const std::function<absl::Time()> now_;
  prometheus::Family<prometheus::Counter>* jobs_metric_ = nullptr;
  const absl::Time started_;

  mutable absl::Mutex mu_;
  std::deque<std::shared_ptr<Job>> queue_ ABSL_GUARDED_BY(mu_);
  // Sets with a job queued or running.
  absl::flat_hash_set<std::string> pending_ ABSL_GUARDED_BY(mu_);
  // Set -> when its last job ended / its last scheduled job was started.
  absl::flat_hash_map<std::string, absl::Time> last_ended_ ABSL_GUARDED_BY(mu_);
  absl::flat_hash_map<std::string, absl::Time> last_scheduled_
      ABSL_GUARDED_BY(mu_);
  // What the worker remembers of an active version's drift.
  struct DriftMark {
    // When the change began: the evaluated_at of the last evaluation that
    // found the version steady before one found it out of `steady` (that
    // one's own time when none did); kept until it is steady again, across
    // jobs. A drift job's training window starts there
    // (refit.training_window).
    absl::Time onset = absl::InfinitePast();
    // Its labelled_since_start when first seen drifting after the set's
    // last job (min_new_labelled); unset until then.
    std::optional<int64_t> labelled;
  };
  absl::flat_hash_map<SetVersion, DriftMark> drift_marks_ ABSL_GUARDED_BY(mu_);
  // An active version -> its last evaluation in state `steady`.
  absl::flat_hash_map<SetVersion, absl::Time> last_steady_ ABSL_GUARDED_BY(mu_);
  // Set -> its active version's last evaluation: the drift evidence a job's
  // dossier shows.
  absl::flat_hash_map<std::string, v1::SetHealth> last_health_
      ABSL_GUARDED_BY(mu_);
  int64_t next_id_ ABSL_GUARDED_BY(mu_);  // after the audit's last job
  int64_t finished_ ABSL_GUARDED_BY(mu_) = 0;
  bool stopping_ ABSL_GUARDED_BY(mu_) = false;

  std::thread thread_;
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_REFIT_WORKER_H_
