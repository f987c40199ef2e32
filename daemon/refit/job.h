// File: daemon/refit/job.h
//
// One refit job: re-estimates a set from the labelled records of its
// ledger along the updating ladder and decides whether the result may
// replace the active version.
//
//   1. Data (refit.training_window): the labelled records the active role
//      of the set scored (any version), features as received, ranked by
//      score time (ties by record id). A drift-started job under
//      SINCE_DRIFT_ONSET (the default) takes those scored since the drift's
//      onset (RefitTrigger::drift_onset), at most `window_labelled`; when
//      fewer than `min_labelled` were scored since, it extends back to the
//      `min_labelled` most recent and says so. Schedule and manual jobs (and
//      every job under MOST_RECENT) take the most recent `window_labelled`.
//      The choice and its counts go to the job's reason text, audit row and
//      dossier.
//   2. Holdout (refit.holdout): OUT_OF_TIME (the default) holds out the
//      most recent round(holdout_fraction * n) records by score time;
//      RANDOM_BY_ID holds out a record when the FNV-1a hash of its id,
//      mixed by MurmurHash3's 64-bit finalizer, as a fraction of 2^64, is
//      below holdout_fraction (the same record always on the same side).
//   3. The updating ladder on the training part (monitor/updating_ladder.h):
//      rung 1 intercept recalibration (the active log-odds as offset; the
//      candidate differs from the active set only in its intercept), rung 2
//      logistic recalibration (every coefficient scaled by the slope), rung
//      3 ridge toward the active coefficients on the active transforms
//      (penalty by 5-fold cross-validated log-likelihood), rung 4 full
//      re-estimation with transforms, levels and bin edges learned again
//      (IRLS with the policy's L2 penalty, scorer/fit.h). A closed testing
//      procedure of likelihood-ratio tests at refit.ladder_alpha chooses the
//      rung, or keeps the active version (no candidate).
//   4. Comparison on the holdout: both versions score every held-out record
//      through the serving code path; paired log-loss difference with a 95%
//      interval (monitor/paired_comparison.h). The candidate wins when it
//      lowers the holdout log-loss by at least `margin` and the interval's
//      upper end is below zero.
//   5. A winner is stored as a CANDIDATE (mode PROPOSE) or promoted (AUTO);
//      a loser or a failure (too few labels, separation, no convergence,
//      ...) changes nothing. Every job writes its ladder, fit, comparison
//      or failure to the audit table.
//
// Thread-safe: Run may be called from any thread, one job at a time per
// runner (the refit worker, daemon/refit_worker.h, runs them one by one).
#ifndef PLUMBLINE_DAEMON_REFIT_JOB_H_
#define PLUMBLINE_DAEMON_REFIT_JOB_H_

#include <cstdint>
#include <functional>
#include <optional>
#include <string>

#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"
#include "absl/time/time.h"
#include "daemon/ledger/ledger.h"
#include "daemon/policy/drift_policy.h"
#include "daemon/registry/lifecycle.h"
#include "daemon/review/dossier_store.h"
#include "daemon/scoring/set_registry.h"
#include "plumbline/v1/config.pb.h"
#include "plumbline/v1/monitor.pb.h"
#include "plumbline/v1/registry.pb.h"

namespace plumbline::daemon {

// config.proto RefitPolicy with its defaults applied.
struct RefitSettings {
  v1::RefitPolicy::Mode mode = v1::RefitPolicy::PROPOSE;
  absl::Duration schedule = absl::ZeroDuration();  // zero: no schedule
  absl::Duration cooldown = absl::Seconds(3600);
  int64_t min_labelled = 1000;
  int64_t window_labelled = 100000;
  double holdout_fraction = 0.3;
  double margin = 0.001;
  double l2 = 0;
  int64_t min_new_labelled = 0;  // 0: a drift-started refit starts at once
  v1::RefitPolicy::Holdout holdout = v1::RefitPolicy::OUT_OF_TIME;
  v1::RefitPolicy::TrainingWindow training_window =
      v1::RefitPolicy::SINCE_DRIFT_ONSET;
  double ladder_alpha = 0.05;  // the closed test's level
};

// INVALID_ARGUMENT naming the field for a holdout_fraction outside (0, 1),
// a negative margin or l2, window_labelled below min_labelled, a
// ladder_alpha outside (0, 1) or an unknown holdout / training_window.
absl::StatusOr<RefitSettings> RefitSettingsFrom(const v1::RefitPolicy& policy);

// The RANDOM_BY_ID holdout rule of step 2.
bool InHoldout(absl::string_view record_id, double holdout_fraction);

// What started a refit job.
enum class RefitTriggerKind {
  kDrift,     // the drift policy found the active version drifting
  kSchedule,  // refit.schedule elapsed
  kManual,    // plumbctl refit (Registry.Refit)
};
// "drift" | "schedule" | "manual": audit details, logs and metric labels.
absl::string_view RefitTriggerName(RefitTriggerKind kind);

struct RefitTrigger {
  std::string set;
  RefitTriggerKind kind = RefitTriggerKind::kManual;
  std::string actor;
  std::string reason;
  // The set's last evaluation when the job was queued (its dossier's drift
  // evidence); the worker fills it.
  std::optional<v1::SetHealth> evidence;
  // Drift jobs: when the change began (the last evaluation that found the
  // active version `steady` before one did not); the worker fills it.
  // Unset: the job takes the most recent window.
  std::optional<absl::Time> drift_onset = std::nullopt;
};

struct RefitOutcome {
  enum class Result { kPromoted, kProposed, kNotBetter, kFailed };
  Result result = Result::kFailed;
  // The stored candidate (kPromoted, kProposed).
  std::optional<VersionRecord> candidate;
  // What happened, for people (also the audit detail).
  std::string summary;
  // The job's number and its dossier, when one was written
  // (WriteDossiersTo).
  int64_t job = 0;
  std::string dossier_path;
  // The updating ladder, once the job fitted it.
  std::optional<v1::RefitLadder> ladder = std::nullopt;
};

// "promoted", "proposed", "not_better", "failed" (the metric's label).
absl::string_view RefitResultName(RefitOutcome::Result result);

class RefitRunner {
 public:
  // All pointers must outlive the runner.
  RefitRunner(
      Ledger* ledger, Lifecycle* lifecycle, SetRegistry* registry,
      RefitSettings settings,
      std::function<absl::Time()> now = [] { return absl::Now(); });

  // Runs job `job_id` for `trigger` to the end. Never fails: a failure is
  // an outcome (kFailed) with its reason, also written to the audit table.
  RefitOutcome Run(const RefitTrigger& trigger, int64_t job_id);

  // The highest job id in the audit of every set (0 if none), so job ids
  // keep growing across restarts.
  int64_t LastJobId();

  const RefitSettings& settings() const { return settings_; }

  // Every later job writes its dossier (daemon/review/dossier_html.h) into
  // `store`, drawing the policy's thresholds; both must outlive the runner.
  // A dossier that cannot be written is logged (event=refit_dossier_failed)
  // and never fails the job. Call before the first Run.
  void WriteDossiersTo(const DossierStore* store, const DriftPolicy* policy) {
    dossiers_ = store;
    policy_ = policy;
  }

  // Whether `set` has a candidate from a refit job waiting for approval:
  // drift- and schedule-triggered jobs wait until it is approved or
  // replaced, rather than piling up candidates nobody has looked at.
  bool HasWaitingCandidate(const std::string& set);

 private:
  Ledger* const ledger_;
  Lifecycle* const lifecycle_;
  SetRegistry* const registry_;
  const RefitSettings settings_;
  const std::function<absl::Time()> now_;
  // Set once before the first job (WriteDossiersTo); null: no dossiers.
  const DossierStore* dossiers_ = nullptr;
  const DriftPolicy* policy_ = nullptr;
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_REFIT_JOB_H_
