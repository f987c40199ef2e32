// File: monitor/outcome_accumulators.h
//
// Streaming accumulators of labelled records (log-odds + 0/1 outcome) for
// the daemon's windows: O(bins) memory whatever the window length, Add() per
// record, Merge() to combine window buckets, Result() for the figures.
//
//   LossAccumulator         log-loss, Brier score, calibration-in-the-large:
//                           exact (compensated sums).
//   ReliabilityAccumulator  equal-width reliability table, ECE and the
//                           Hosmer–Lemeshow test on those fixed bins: exact.
//   ScoreGridAccumulator    (monitor/score_grid.h) AUC, calibration
//                           intercept/slope, equal-count table, HL deciles:
//                           on a fixed log-odds grid.
//   OutcomeAccumulator      all three behind one Add(), for a window.
//
// "Exact" means: equal to the pure functions (metrics.h, reliability.h,
// hosmer_lemeshow.h) on the same records, to about one rounding of each sum
// (tested to 1e-12 on windows of 1 to 1,000,000 records). The pure functions
// take probabilities where these take log-odds; the probability of a record
// is Logistic(log_odds) (scorer/logistic.h).
//
//   absl::StatusOr<OutcomeAccumulator> acc = OutcomeAccumulator::Create({});
//   absl::Status s = acc->Add(-1.3, 0);
//   absl::StatusOr<OutcomeFigures> f = acc->Result();
//   if (f.ok()) Export(f->loss.log_loss, f->grid.auc, ...);
//
// Add() refuses (INVALID_ARGUMENT, record not counted) a label other than
// 0/1 or a non-finite log-odds. Result() is FAILED_PRECONDITION when no
// record was added; figures that can be undefined for a non-empty window
// (AUC with one class, ...) are StatusOr members. Not thread-safe; value
// types that copy.
//
// Saving and restoring (daemon/health/window_state.h): each accumulator's
// state() is everything it holds, the compensated sums' error terms
// included; Restore(state) on an accumulator created with the same options
// makes it equal, bit for bit, to the one saved. Restore checks the state
// (INVALID_ARGUMENT naming the field) and leaves the accumulator unchanged
// when it refuses.
#ifndef PLUMBLINE_MONITOR_OUTCOME_ACCUMULATORS_H_
#define PLUMBLINE_MONITOR_OUTCOME_ACCUMULATORS_H_

#include <cstdint>
#include <utility>
#include <vector>

#include "absl/status/status.h"
#include "absl/status/statusor.h"
#include "monitor/compensated_sum.h"
#include "monitor/hosmer_lemeshow.h"
#include "monitor/reliability.h"
#include "monitor/score_grid.h"

namespace plumbline::monitor {

struct LossFigures {
  int64_t count = 0;
  int64_t positives = 0;
  double log_loss = 0;
  double brier_score = 0;
  double mean_predicted = 0;
  double observed_rate = 0;
  double calibration_in_the_large = 0;  // mean_predicted - observed_rate
};

class LossAccumulator {
 public:
  struct State {
    int64_t count = 0;
    int64_t positives = 0;
    CompensatedSum loss;
    CompensatedSum squared_error;
    CompensatedSum predicted;
  };

  absl::Status Add(double log_odds, int label);
  absl::Status Merge(const LossAccumulator& other);  // always OK
  int64_t count() const { return count_; }
  absl::StatusOr<LossFigures> Result() const;

  State state() const;
  // INVALID_ARGUMENT for a count outside [0, 2^40], positives outside
  // [0, count] or a sum that is not finite.
  absl::Status Restore(const State& state);

 private:
  friend class OutcomeAccumulator;
  // `loss` = -log-likelihood of the record.
  void Record(double probability, double loss, int label);

  int64_t count_ = 0;
  int64_t positives_ = 0;
  CompensatedSum loss_;
  CompensatedSum squared_error_;
  CompensatedSum predicted_;
};

struct ReliabilityFigures {
  ReliabilityTable table;
  double expected_calibration_error = 0;
  // On the table's non-empty bins; FAILED_PRECONDITION with fewer than 3.
  absl::StatusOr<HosmerLemeshowResult> hosmer_lemeshow;
};

class ReliabilityAccumulator {
 public:
  ReliabilityAccumulator() : ReliabilityAccumulator(10) {}
  // INVALID_ARGUMENT if bins < 1.
  static absl::StatusOr<ReliabilityAccumulator> Create(int bins);

  absl::Status Add(double log_odds, int label);
  // INVALID_ARGUMENT if the bin counts differ.
  absl::Status Merge(const ReliabilityAccumulator& other);
  int64_t count() const { return count_; }
  absl::StatusOr<ReliabilityFigures> Result() const;

  // The per-bin sums; the count is their total.
  const std::vector<BinSums>& bins() const { return sums_; }
  // INVALID_ARGUMENT unless there is one entry per bin, each with a count
  // in [0, 2^40], positives in [0, count] and a finite sum.
  absl::Status Restore(std::vector<BinSums> bins);

 private:
  friend class OutcomeAccumulator;
  explicit ReliabilityAccumulator(int bins);
  void Record(double probability, int label) {
    sums_[EqualWidthBinOf(edges_, probability)].Add(probability, label);
    ++count_;
  }

  std::vector<double> edges_;
  std::vector<BinSums> sums_;
  int64_t count_ = 0;
};

struct OutcomeOptions {
  // Equal-width bins of the reliability table, ECE and fixed-bin HL.
  int reliability_bins = 10;
  // Equal-count reliability bins, from the score grid.
  int equal_count_bins = 10;
  // Hosmer–Lemeshow groups of equal count (deciles), from the score grid.
  int hosmer_lemeshow_groups = 10;
  // The score grid (see monitor/score_grid.h).
  double grid_low = ScoreGrid::kDefaultLow;
  double grid_high = ScoreGrid::kDefaultHigh;
  int grid_cells = ScoreGrid::kDefaultCells;
};

struct OutcomeFigures {
  LossFigures loss;
  ReliabilityFigures fixed_bins;
  ScoreGridFigures grid;
};

class OutcomeAccumulator {
 public:
  // INVALID_ARGUMENT naming the bad option.
  static absl::StatusOr<OutcomeAccumulator> Create(
      const OutcomeOptions& options);

  absl::Status Add(double log_odds, int label);
  // INVALID_ARGUMENT if the options differ.
  absl::Status Merge(const OutcomeAccumulator& other);
  int64_t count() const { return loss_.count(); }
  absl::StatusOr<OutcomeFigures> Result() const;

  const LossAccumulator& loss() const { return loss_; }
  const ReliabilityAccumulator& fixed_bins() const { return fixed_bins_; }
  const ScoreGridAccumulator& grid() const { return grid_; }

  struct State {
    LossAccumulator::State loss;
    std::vector<BinSums> fixed_bins;
    ScoreGridAccumulator::State grid;
  };
  State state() const;
  // Each part's Restore, and INVALID_ARGUMENT unless the three parts hold
  // the same number of records and of positives.
  absl::Status Restore(State state);

 private:
  OutcomeAccumulator(ReliabilityAccumulator fixed_bins,
                     ScoreGridAccumulator grid)
      : fixed_bins_(std::move(fixed_bins)), grid_(std::move(grid)) {}

  LossAccumulator loss_;
  ReliabilityAccumulator fixed_bins_;
  ScoreGridAccumulator grid_;
};

}  // namespace plumbline::monitor

#endif  // PLUMBLINE_MONITOR_OUTCOME_ACCUMULATORS_H_
