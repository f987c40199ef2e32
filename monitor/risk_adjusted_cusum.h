// File: monitor/risk_adjusted_cusum.h
//
// The risk-adjusted Bernoulli CUSUM chart of Steiner, Cook, Farewell &
// Treasure (2000, Biostatistics 1(4):441-452): a sequential alarm on
// outcomes that uses the model's own predicted risk of each record, so a
// change in the mix of records (more high-risk records) does not look like
// a change in the model. The daemon runs one chart per direction per set
// version and feeds it every labelled record; the drift policy reads
// alarms(), and value() and limit() go to the metrics.
//
// Each record with log-odds z (probability p) and outcome y adds the
// log-likelihood ratio of an alternative model z_A = shift + slope * z
// against the model itself:
//
//   W = y * (z_A - z) - log((1 + e^z_A) / (1 + e^z))
//     = log(p_A / p)               if y = 1,
//       log((1 - p_A) / (1 - p))   if y = 0.
//
// With slope 1 and shift log(R_A) the alternative is "odds multiplied by
// R_A", and W is Steiner et al.'s weight with R_0 = 1:
//   y = 1: W = log(R_A / (1 - p + R_A p)),  y = 0: W = log(1 / (1 - p + R_A
//   p)).
// R_A > 1 watches for more positive outcomes than predicted (upper chart),
// R_A < 1 for fewer (lower chart); both charts accumulate upwards.
// A slope alternative (shift 0, slope 0.8: the model's log-odds are too
// extreme) is the same construction with another simple alternative: Page's
// CUSUM of per-record log-likelihood ratios (Page 1954, Biometrika 41), of
// which Steiner et al.'s chart is the odds-ratio case. We found no separate
// publication of the slope form; it is offered as an option.
//
// The chart: S_0 = 0, S_t = max(0, S_{t-1} + W_t); an alarm when S_t >= h,
// after which S restarts at 0. h comes from ChooseControlLimit
// (monitor/cusum_run_length.h) for a stated in-control average run length.
//
//   absl::StatusOr<RiskAdjustedCusum> upper = RiskAdjustedCusum::Create(
//       LogOddsChange::OddsRatio(1.5), /*limit=*/limit->limit);
//   absl::StatusOr<CusumStep> step = upper->Add(log_odds, label);
//   if (step.ok() && step->alarm) { ... }
//
// Not thread-safe; a small value type (the daemon guards it with the
// window's mutex). CusumWeight and LogOddsChange are pure.
#ifndef PLUMBLINE_MONITOR_RISK_ADJUSTED_CUSUM_H_
#define PLUMBLINE_MONITOR_RISK_ADJUSTED_CUSUM_H_

#include <cmath>
#include <cstdint>

#include "absl/status/status.h"
#include "absl/status/statusor.h"

namespace plumbline::monitor {

// A change of the log-odds: z -> shift + slope * z. The default is no
// change. Used for a chart's alternative and for a simulated truth.
struct LogOddsChange {
  double shift = 0;
  double slope = 1;

  // Odds multiplied by `ratio` (> 0): shift log(ratio), slope 1.
  static LogOddsChange OddsRatio(double ratio) { return {std::log(ratio), 1}; }
  double Apply(double log_odds) const { return shift + slope * log_odds; }
  bool IsIdentity() const { return shift == 0 && slope == 1; }
};

// INVALID_ARGUMENT naming the field unless shift and slope are finite, the
// slope > 0 and the change is not the identity (a chart needs an
// alternative that differs from the model).
absl::Status CheckAlternative(const LogOddsChange& alternative);

// W for one record. REQUIRES: finite log_odds, label 0 or 1, a valid
// alternative.
double CusumWeight(const LogOddsChange& alternative, double log_odds,
                   int label);

// What one record did to the chart.
struct CusumStep {
  double weight = 0;   // W of the record
  double value = 0;    // S after the record, before any reset
  bool alarm = false;  // value >= limit; the chart restarted at 0
};

class RiskAdjustedCusum {
 public:
  // INVALID_ARGUMENT for a bad alternative (CheckAlternative) or a limit
  // that is not finite and > 0.
  static absl::StatusOr<RiskAdjustedCusum> Create(LogOddsChange alternative,
                                                  double limit);

  // Adds one labelled record. INVALID_ARGUMENT (chart unchanged) for a
  // label other than 0/1 or a non-finite log-odds.
  absl::StatusOr<CusumStep> Add(double log_odds, int label);

  double value() const { return value_; }  // S now (0 right after an alarm)
  double limit() const { return limit_; }
  const LogOddsChange& alternative() const { return alternative_; }
  int64_t records() const { return records_; }  // records added
  int64_t alarms() const { return alarms_; }    // alarms raised
  // Records since the last alarm (or since creation).
  int64_t records_since_alarm() const { return records_since_alarm_; }

  // What the chart has accumulated, for saving it; Restore puts it back on a
  // chart created with the same alternative and limit. INVALID_ARGUMENT
  // naming the field (chart unchanged) unless 0 <= value < limit, the
  // counts are >= 0, alarms <= records and records_since_alarm <= records.
  struct State {
    double value = 0;
    int64_t records = 0;
    int64_t alarms = 0;
    int64_t records_since_alarm = 0;
  };
  State state() const {
    return State{value_, records_, alarms_, records_since_alarm_};
  }
  absl::Status Restore(const State& state);

 private:
  RiskAdjustedCusum(LogOddsChange alternative, double limit)
      : alternative_(alternative), limit_(limit) {}

  LogOddsChange alternative_;
  double limit_;
  double value_ = 0;
  int64_t records_ = 0;
  int64_t alarms_ = 0;
  int64_t records_since_alarm_ = 0;
};

}  // namespace plumbline::monitor

#endif  // PLUMBLINE_MONITOR_RISK_ADJUSTED_CUSUM_H_
