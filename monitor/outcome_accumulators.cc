#include "monitor/outcome_accumulators.h"

#include <cmath>
#include <string>
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

LossAccumulator::State LossAccumulator::state() const {
  return State{count_, positives_, loss_, squared_error_, predicted_};
}

absl::Status LossAccumulator::Restore(const State& state) {
  constexpr absl::string_view kWhat = "log-loss state";
  if (absl::Status s = internal::CheckStateCount(kWhat, "count", state.count);
      !s.ok()) {
    return s;
  }
  if (state.positives < 0 || state.positives > state.count) {
    return absl::InvalidArgumentError(
        absl::StrCat(kWhat, ": positives is ", state.positives,
                     "; it must lie in [0, count = ", state.count, "]"));
  }
  for (const auto& [field, sum] :
       {std::pair<absl::string_view, const CompensatedSum*>{"loss",
                                                            &state.loss},
        {"squared_error", &state.squared_error},
        {"predicted", &state.predicted}}) {
    if (absl::Status s = internal::CheckStateSum(kWhat, field, sum->sum(),
                                                 sum->compensation());
        !s.ok()) {
      return s;
    }
  }
  count_ = state.count;
  positives_ = state.positives;
  loss_ = state.loss;
  squared_error_ = state.squared_error;
  predicted_ = state.predicted;
  return absl::OkStatus();
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

absl::Status ReliabilityAccumulator::Restore(std::vector<BinSums> bins) {
  constexpr absl::string_view kWhat = "reliability table state";
  if (bins.size() != sums_.size()) {
    return absl::InvalidArgumentError(absl::StrCat(
        kWhat, ": ", bins.size(), " bins; this table has ", sums_.size()));
  }
  int64_t count = 0;
  for (size_t i = 0; i < bins.size(); ++i) {
    const BinSums& b = bins[i];
    const std::string field = absl::StrCat("bins[", i, "]");
    if (absl::Status s =
            internal::CheckStateCount(kWhat, field + ".count", b.count);
        !s.ok()) {
      return s;
    }
    if (b.positives < 0 || b.positives > b.count) {
      return absl::InvalidArgumentError(
          absl::StrCat(kWhat, ": ", field, ".positives is ", b.positives,
                       "; it must lie in [0, count = ", b.count, "]"));
    }
    if (absl::Status s = internal::CheckStateSum(kWhat, field + ".predicted",
                                                 b.predicted.sum(),
                                                 b.predicted.compensation());
        !s.ok()) {
      return s;
    }
    count += b.count;  // at most bins x 2^40: no overflow
  }
  sums_ = std::move(bins);
  count_ = count;
  return absl::OkStatus();
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

OutcomeAccumulator::State OutcomeAccumulator::state() const {
  return State{loss_.state(), fixed_bins_.bins(), grid_.state()};
}

absl::Status OutcomeAccumulator::Restore(State state) {
  LossAccumulator loss = loss_;
  ReliabilityAccumulator fixed_bins = fixed_bins_;
  ScoreGridAccumulator grid = grid_;
  if (absl::Status s = loss.Restore(state.loss); !s.ok()) return s;
  if (absl::Status s = fixed_bins.Restore(std::move(state.fixed_bins));
      !s.ok()) {
    return s;
  }
  if (absl::Status s = grid.Restore(std::move(state.grid)); !s.ok()) return s;
  int64_t bin_positives = 0;
  for (const BinSums& b : fixed_bins.bins()) bin_positives += b.positives;
  if (fixed_bins.count() != loss.count() || grid.count() != loss.count() ||
      bin_positives != loss.state().positives ||
      grid.positives() != loss.state().positives) {
    return absl::InvalidArgumentError(
        absl::StrCat("outcome state: the parts disagree: log-loss holds ",
                     loss.count(), " records (", loss.state().positives,
                     " positive), the reliability table ", fixed_bins.count(),
                     " (", bin_positives, "), the score grid ", grid.count(),
                     " (", grid.positives(), ")"));
  }
  loss_ = std::move(loss);
  fixed_bins_ = std::move(fixed_bins);
  grid_ = std::move(grid);
  return absl::OkStatus();
}

}  // namespace plumbline::monitor
