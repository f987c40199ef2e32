// File: daemon/review/dossier_data.h
//
// The figures a refit dossier shows that the refit job itself does not
// compute: each version's figures on the holdout (log-loss, Brier score,
// exact AUC, reliability table, ROC curve, probabilities over its score
// baseline) and the job's records against the active version's feature
// baselines (PSI, missing and out-of-range rates, the shares per bin: the
// monitor's own accumulators, daemon/health/stability.h). The refit job
// (daemon/refit/job.cc) fills a plumbline.v1.Dossier with them.
//
//   *dossier.mutable_active_holdout() =
//       HoldoutFiguresOf(*active, active_log_odds, labels);
//
// ROC curve: records sorted by probability, highest first; one point per
// distinct probability (all records at that probability called positive),
// from (0, 0) to (1, 1) — scikit-learn's roc_curve with
// drop_intermediate=False, which tests/daemon/review checks. Its
// trapezoid area is the Mann–Whitney AUC (ties count 1/2).
//
// Thread-safe: pure functions.
#ifndef PLUMBLINE_DAEMON_REVIEW_DOSSIER_DATA_H_
#define PLUMBLINE_DAEMON_REVIEW_DOSSIER_DATA_H_

#include <initializer_list>
#include <string>
#include <vector>

#include "absl/status/statusor.h"
#include "absl/time/time.h"
#include "absl/types/span.h"
#include "daemon/registry/version_store.h"
#include "plumbline/v1/registry.pb.h"
#include "scorer/scoring_plan.h"

namespace plumbline::daemon {

// Most ROC points a dossier keeps for drawing.
inline constexpr int kMaxRocPoints = 400;

// The exact ROC curve of `probabilities` against 0/1 `labels`.
// FAILED_PRECONDITION with one class only; INVALID_ARGUMENT for arrays of
// different lengths, labels other than 0/1 or NaN.
absl::StatusOr<std::vector<v1::RocPoint>> RocCurve(
    absl::Span<const double> probabilities, absl::Span<const int> labels);

// At most `max_points` of `curve` for drawing: the first and last points
// and every point that moves at least 1/max_points (in false or true
// positive rate) from the last kept one. REQUIRES: max_points >= 2.
std::vector<v1::RocPoint> ThinRoc(const std::vector<v1::RocPoint>& curve,
                                  int max_points);

// One version's figures on the holdout; `log_odds` and `labels` per record.
// INVALID_ARGUMENT for empty or mismatched input.
absl::StatusOr<v1::HoldoutFigures> HoldoutFiguresOf(
    const scorer::ScoringPlan& plan, absl::Span<const double> log_odds,
    absl::Span<const int> labels);

// The records of every part of `parts` (raw values in `plan`'s feature
// order) against `plan`'s feature baselines, as the monitor's windows
// compute them.
std::vector<v1::FeatureHealth> StabilityOf(
    const scorer::ScoringPlan& plan,
    std::initializer_list<absl::Span<const std::vector<scorer::RawValue>>>
        parts);

// The audit actor of refit job `job`'s rows: "refit job N (...)".
std::string RefitJobActorPrefix(int64_t job);

// Replaces dossier->trail with the rows of `audit` (a set's history) that
// belong to the job (its actor) or to its candidate version, and sets
// trail_as_of to `now`.
void RefreshTrail(const std::vector<AuditRecord>& audit, absl::Time now,
                  v1::Dossier* dossier);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_REVIEW_DOSSIER_DATA_H_
