#include "monitor/outcome_accumulators.h"

#include <cmath>
#include <utility>

#include "absl/status/status.h"
#include "absl/strings/str_cat.h"
#include "monitor/input_check.h"
#include "scorer/logistic.h"

namespace plumbline::monitor {
namespace {

// Logistic(z) and the record's log-loss -LogLogistic(label ? z : -z) from
// one exponential: both functions of scorer/logistic.h evaluate
// e = exp(-|z|) and log1p(e), so this returns the same doubles they do
// (the accumulators must match the pure functions) at half the cost.
struct ProbabilityAndLoss {
  double probability;
  double loss;
};
ProbabilityAndLoss Evaluate(double z, int label) {
  const double e = std::exp(-std::abs(z));
  const double l = std::log1p(e);
  if (z >= 0) return {1.0 / (1.0 + e), label == 1 ? l : z + l};
  return {e / (1.0 + e), label == 1 ? l - z : l};
}

absl::Status NoRecords(absl::string_view what) {
  return absl::FailedPreconditionError(
      absl::StrCat(what, ": no labelled records in the window"));
}

}  // namespace

// ---- LossAccumulator ----

void LossAccumulator::Record(double probability, double loss, int label) {
  ++count_;
  positives_ += label;
  loss_.Add(loss);
  const double d = probability - label;
  squared_error_.Add(d * d);
  predicted_.Add(probability);
}

absl::Status LossAccumulator::Add(double log_odds, int label) {
  if (absl::Status s = internal::CheckRecord("log-loss", log_odds, label);
      !s.ok()) {
    return s;
  }
  const ProbabilityAndLoss r = Evaluate(log_odds, label);
  Record(r.probability, r.loss, label);
  return absl::OkStatus();
}

absl::Status LossAccumulator::Merge(const LossAccumulator& other) {
  count_ += other.count_;
  positives_ += other.positives_;
  loss_.Merge(other.loss_);
  squared_error_.Merge(other.squared_error_);
  predicted_.Merge(other.predicted_);
  return absl::OkStatus();
}

absl::StatusOr<LossFigures> LossAccumulator::Result() const {
  if (count_ == 0) return NoRecords("log-loss");
  const double n = static_cast<double>(count_);
  LossFigures f;
  f.count = count_;
  f.positives = positives_;
  f.log_loss = loss_.Value() / n;
  f.brier_score = squared_error_.Value() / n;
  f.mean_predicted = predicted_.Value() / n;
  f.observed_rate = static_cast<double>(positives_) / n;
  f.calibration_in_the_large = f.mean_predicted - f.observed_rate;
  return f;
}

// ---- ReliabilityAccumulator ----

ReliabilityAccumulator::ReliabilityAccumulator(int bins)
    : edges_(EqualWidthEdges(bins)), sums_(bins) {}

absl::StatusOr<ReliabilityAccumulator> ReliabilityAccumulator::Create(
    int bins) {
  if (absl::Status s = internal::CheckBinCount("reliability table",
                                               "reliability bins", bins, 1);
      !s.ok()) {
    return s;
  }
  return ReliabilityAccumulator(bins);
}

absl::Status ReliabilityAccumulator::Add(double log_odds, int label) {
  if (absl::Status s =
          internal::CheckRecord("reliability table", log_odds, label);
      !s.ok()) {
    return s;
  }
  Record(Logistic(log_odds), label);
  return absl::OkStatus();
}

absl::Status ReliabilityAccumulator::Merge(
    const ReliabilityAccumulator& other) {
  if (sums_.size() != other.sums_.size()) {
    return absl::InvalidArgumentError(
        absl::StrCat("reliability table: cannot merge ", sums_.size(),
                     " bins with ", other.sums_.size()));
  }
  for (size_t i = 0; i < sums_.size(); ++i) sums_[i].Merge(other.sums_[i]);
  count_ += other.count_;
  return absl::OkStatus();
}

absl::StatusOr<ReliabilityFigures> ReliabilityAccumulator::Result() const {
  if (count_ == 0) return NoRecords("reliability table");
  ReliabilityFigures f;
  f.table = MakeReliabilityTable(edges_, sums_);
  f.expected_calibration_error = ExpectedCalibrationError(f.table);
  f.hosmer_lemeshow = HosmerLemeshowFromTable(f.table);
  return f;
}

// ---- OutcomeAccumulator ----

absl::StatusOr<OutcomeAccumulator> OutcomeAccumulator::Create(
    const OutcomeOptions& options) {
  absl::StatusOr<ReliabilityAccumulator> fixed_bins =
      ReliabilityAccumulator::Create(options.reliability_bins);
  if (!fixed_bins.ok()) return fixed_bins.status();
  absl::StatusOr<ScoreGrid> grid = ScoreGrid::Create(
      options.grid_low, options.grid_high, options.grid_cells);
  if (!grid.ok()) return grid.status();
  absl::StatusOr<ScoreGridAccumulator> grid_acc = ScoreGridAccumulator::Create(
      *grid, options.equal_count_bins, options.hosmer_lemeshow_groups);
  if (!grid_acc.ok()) return grid_acc.status();
  return OutcomeAccumulator(*std::move(fixed_bins), *std::move(grid_acc));
}

absl::Status OutcomeAccumulator::Add(double log_odds, int label) {
  if (absl::Status s = internal::CheckRecord("outcome", log_odds, label);
      !s.ok()) {
    return s;
  }
  const ProbabilityAndLoss r = Evaluate(log_odds, label);
  loss_.Record(r.probability, r.loss, label);
  fixed_bins_.Record(r.probability, label);
  grid_.Record(log_odds, r.probability, label);
  return absl::OkStatus();
}

absl::Status OutcomeAccumulator::Merge(const OutcomeAccumulator& other) {
  if (absl::Status s = fixed_bins_.Merge(other.fixed_bins_); !s.ok()) return s;
  if (absl::Status s = grid_.Merge(other.grid_); !s.ok()) return s;
  return loss_.Merge(other.loss_);
}

absl::StatusOr<OutcomeFigures> OutcomeAccumulator::Result() const {
  absl::StatusOr<LossFigures> loss = loss_.Result();
  if (!loss.ok()) return loss.status();
  absl::StatusOr<ReliabilityFigures> fixed_bins = fixed_bins_.Result();
  if (!fixed_bins.ok()) return fixed_bins.status();
  OutcomeFigures f;
  f.loss = *loss;
  f.fixed_bins = *std::move(fixed_bins);
  f.grid = grid_.Result();
  return f;
}

}  // namespace plumbline::monitor
