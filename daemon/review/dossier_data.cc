// File: daemon/review/dossier_data.cc
#include "daemon/review/dossier_data.h"

#include <algorithm>
#include <cmath>
#include <numeric>

#include "absl/status/status.h"
#include "absl/strings/match.h"
#include "absl/strings/str_cat.h"
#include "daemon/health/pictures.h"
#include "daemon/health/stability.h"
#include "daemon/review/version_view.h"
#include "daemon/util/time.h"
#include "monitor/auc.h"
#include "monitor/metrics.h"
#include "monitor/reliability.h"
#include "scorer/logistic.h"

namespace plumbline::daemon {
namespace {

// The dossier draws shares and PSI from the monitor's accumulator; the PSI
// test Fill adds beside them is not shown, so its level does not matter
// (this is the default drift_policy.alpha).
constexpr double kSharesOnlyAlpha = 0.01;

}  // namespace

absl::StatusOr<std::vector<v1::RocPoint>> RocCurve(
    absl::Span<const double> probabilities, absl::Span<const int> labels) {
  if (probabilities.size() != labels.size()) {
    return absl::InvalidArgumentError(
        absl::StrCat("ROC curve: ", probabilities.size(), " probabilities but ",
                     labels.size(), " labels"));
  }
  int64_t positives = 0;
  for (size_t i = 0; i < labels.size(); ++i) {
    if ((labels[i] != 0 && labels[i] != 1) || std::isnan(probabilities[i])) {
      return absl::InvalidArgumentError(
          absl::StrCat("ROC curve: record ", i, " has label ", labels[i],
                       " and probability ", probabilities[i]));
    }
    positives += labels[i];
  }
  const int64_t negatives = static_cast<int64_t>(labels.size()) - positives;
  if (positives == 0 || negatives == 0) {
    return absl::FailedPreconditionError(
        "ROC curve: the holdout has one class only");
  }
  std::vector<size_t> order(labels.size());
  std::iota(order.begin(), order.end(), 0);
  std::stable_sort(order.begin(), order.end(), [&](size_t a, size_t b) {
    return probabilities[a] > probabilities[b];
  });
  std::vector<v1::RocPoint> curve;
  v1::RocPoint start;
  start.set_threshold(std::numeric_limits<double>::infinity());
  curve.push_back(start);
  int64_t tp = 0, fp = 0;
  for (size_t i = 0; i < order.size(); ++i) {
    const size_t r = order[i];
    tp += labels[r];
    fp += 1 - labels[r];
    if (i + 1 < order.size() &&
        probabilities[order[i + 1]] == probabilities[r]) {
      continue;  // ties: one point per distinct probability
    }
    v1::RocPoint p;
    p.set_false_positive_rate(static_cast<double>(fp) /
                              static_cast<double>(negatives));
    p.set_true_positive_rate(static_cast<double>(tp) /
                             static_cast<double>(positives));
    p.set_threshold(probabilities[r]);
    curve.push_back(p);
  }
  return curve;
}

std::vector<v1::RocPoint> ThinRoc(const std::vector<v1::RocPoint>& curve,
                                  int max_points) {
  if (static_cast<int>(curve.size()) <= max_points) return curve;
  const double step = 1.0 / max_points;
  std::vector<v1::RocPoint> out = {curve.front()};
  for (size_t i = 1; i + 1 < curve.size(); ++i) {
    const v1::RocPoint& last = out.back();
    if (curve[i].false_positive_rate() - last.false_positive_rate() >= step ||
        curve[i].true_positive_rate() - last.true_positive_rate() >= step) {
      out.push_back(curve[i]);
    }
  }
  out.push_back(curve.back());
  return out;
}

absl::StatusOr<v1::HoldoutFigures> HoldoutFiguresOf(
    const scorer::ScoringPlan& plan, absl::Span<const double> log_odds,
    absl::Span<const int> labels) {
  v1::HoldoutFigures out;
  out.set_version(plan.version());
  std::vector<double> p(log_odds.size());
  for (size_t i = 0; i < log_odds.size(); ++i) p[i] = Logistic(log_odds[i]);
  absl::StatusOr<double> loss = monitor::LogLoss(log_odds, labels);
  if (!loss.ok()) return loss.status();
  absl::StatusOr<double> brier = monitor::BrierScore(p, labels);
  if (!brier.ok()) return brier.status();
  out.set_records(static_cast<int64_t>(labels.size()));
  int64_t positives = 0;
  for (int l : labels) positives += l;
  out.set_positives(positives);
  out.set_log_loss(*loss);
  out.set_brier_score(*brier);
  if (absl::StatusOr<double> auc = monitor::Auc(p, labels); auc.ok()) {
    out.set_auc(*auc);
  }
  absl::StatusOr<monitor::ReliabilityTable> table =
      monitor::EqualWidthReliability(p, labels, 10);
  if (!table.ok()) return table.status();
  v1::WindowHealth holder;
  FillReliability(*table, &holder);
  *out.mutable_reliability() = holder.reliability();
  if (absl::StatusOr<std::vector<v1::RocPoint>> roc = RocCurve(p, labels);
      roc.ok()) {
    out.set_roc_points(static_cast<int64_t>(roc->size()));
    for (v1::RocPoint& point : ThinRoc(*roc, kMaxRocPoints)) {
      *out.add_roc() = std::move(point);
    }
  }
  // The probabilities over the version's score baseline: the monitor's
  // accumulator, fed the probabilities alone (no feature is read).
  const std::shared_ptr<const StabilityLayout> layout =
      StabilityLayout::Create(plan);
  if (layout->score() != nullptr) {
    ScoredAccumulator acc(layout);
    const std::vector<scorer::RawValue> none(
        static_cast<size_t>(plan.set().features_size()),
        scorer::RawValue::Missing());
    for (double prob : p) acc.Add(prob, none);
    v1::WindowHealth w;
    acc.Fill(&w, kSharesOnlyAlpha);
    *out.mutable_score_shares() = w.score_shares();
  }
  return out;
}

std::vector<v1::FeatureHealth> StabilityOf(
    const scorer::ScoringPlan& plan,
    std::initializer_list<absl::Span<const std::vector<scorer::RawValue>>>
        parts) {
  ScoredAccumulator acc(StabilityLayout::Create(plan));
  for (absl::Span<const std::vector<scorer::RawValue>> records : parts) {
    for (const std::vector<scorer::RawValue>& r : records) acc.Add(0.5, r);
  }
  v1::WindowHealth w;
  acc.Fill(&w, kSharesOnlyAlpha);
  return {w.features().begin(), w.features().end()};
}

std::string RefitJobActorPrefix(int64_t job) {
  return absl::StrCat("refit job ", job, " (");
}

void RefreshTrail(const std::vector<AuditRecord>& audit, absl::Time now,
                  v1::Dossier* dossier) {
  dossier->clear_trail();
  const std::string prefix = RefitJobActorPrefix(dossier->job());
  for (const AuditRecord& e : audit) {
    if (absl::StartsWith(e.actor, prefix) ||
        (!dossier->candidate_version().empty() &&
         e.version == dossier->candidate_version())) {
      *dossier->add_trail() = ToAuditEntry(e);
    }
  }
  *dossier->mutable_trail_as_of() = ToTimestamp(now);
}

}  // namespace plumbline::daemon
