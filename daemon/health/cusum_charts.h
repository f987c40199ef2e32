// File: daemon/health/cusum_charts.h
//
// The outcome alarms of one set version: risk-adjusted Bernoulli CUSUM
// charts (monitor/risk_adjusted_cusum.h, Steiner et al. 2000) fed with every
// mature labelled record of the version, in the order the records mature.
// HealthWindows owns one CusumCharts; HealthMonitor chooses the control
// limits (ChooseCusumLimits, about 0.2-0.4 s per chart at the 500 lattice
// states used here) on the monitor's thread at the version's first
// evaluation, never on the request path, and the drift policy reads each
// chart's alarms.
//
//   CusumCharts charts(options);                  // no limits yet
//   charts.Add(log_odds, label);                  // buffered until ready
//   charts.SetLimits(ChooseCusumLimits(plan.set(), options));  // replays
//   charts.Fill(&set_health);                     // value, limit, alarms
//
// Records that arrive before the limits are known are buffered (at most
// kMaxBuffered; past it they are counted in the note and skipped) and
// replayed, in order, once SetLimits is called. A chart whose limit cannot
// be chosen (no usable score baseline) stays not ready with the reason.
//
// The risk distribution behind the limits is the set's score_baseline
// histogram (FromProbabilityHistogram); when the baseline lacks min or max,
// the outer bins are closed one neighbouring bin width further out on the
// log-odds scale (an approximation, stated in the chart's note).
//
// Not thread-safe: HealthWindows guards it with its labelled mutex.
// ChooseCusumLimits is a pure function.
#ifndef PLUMBLINE_DAEMON_HEALTH_CUSUM_CHARTS_H_
#define PLUMBLINE_DAEMON_HEALTH_CUSUM_CHARTS_H_

#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include "absl/status/status.h"
#include "absl/status/statusor.h"
#include "monitor/cusum_run_length.h"
#include "monitor/risk_adjusted_cusum.h"
#include "plumbline/v1/coefficient_set.pb.h"
#include "plumbline/v1/monitor.pb.h"

namespace plumbline::daemon {

// config.proto CusumPolicy with its defaults.
struct CusumOptions {
  bool enabled = true;
  // Upper chart: odds x upper_odds_ratio (> 1).
  double upper_odds_ratio = 1.5;
  // Lower chart: odds x lower_odds_ratio (in (0, 1)).
  double lower_odds_ratio = 1.0 / 1.5;
  // Slope chart: log-odds x slope_alternative; 0 means no slope chart.
  double slope_alternative = 0.75;
  // In-control average run length of each chart, in labelled records.
  double in_control_arl = 100000;
  // Lattice points of the Markov chain (monitor/cusum_run_length.h). 500
  // keeps a chart's limit to about 0.3 s; the extrapolated ARL then moves
  // by well under 1% against 4000 points at an ARL of 1e5 (measured).
  int lattice_states = 500;

  // INVALID_ARGUMENT naming the config field (drift_policy.cusum.
  // upper_odds_ratio ...) for values the charts cannot use.
  absl::Status Check() const;
};

// The limit of one chart, or why there is none.
struct CusumLimit {
  std::string chart;  // "upper", "lower", "slope"
  monitor::LogOddsChange alternative;
  absl::StatusOr<monitor::ControlLimit> limit;
  std::string caveat;  // e.g. the baseline lacked min/max
};

// The charts `options` asks for, with their limits for `set`'s score
// baseline. Charts whose limit cannot be chosen carry the error.
std::vector<CusumLimit> ChooseCusumLimits(const v1::CoefficientSet& set,
                                          const CusumOptions& options);

// The risk distribution of `set`'s score_baseline; `caveat` says what was
// approximated. FAILED_PRECONDITION when the set has no usable baseline.
absl::StatusOr<monitor::RiskDistribution> BaselineRisks(
    const v1::CoefficientSet& set, std::string* caveat);

class CusumCharts {
 public:
  static constexpr int64_t kMaxBuffered = 1'000'000;

  explicit CusumCharts(const CusumOptions& options);

  // True until SetLimits has been called (and the charts are enabled).
  bool needs_limits() const { return enabled_ && !limits_set_; }

  // Installs the limits (one per chart, as ChooseCusumLimits returns them)
  // and replays the buffered records.
  void SetLimits(std::vector<CusumLimit> limits);

  // One mature labelled record. Invalid records (label not 0/1, a
  // non-finite log-odds) are not added.
  void Add(double log_odds, int label);

  // Appends one CusumChart per chart to out->cusum.
  void Fill(v1::SetHealth* out) const;

  // What the charts hold, for saving (daemon/health/window_state.h).
  struct ChartState {
    std::string name;  // "upper", "lower", "slope"
    std::string note;
    // Set exactly when the chart runs (its limit was chosen).
    std::optional<monitor::ControlLimit> limit;
    monitor::RiskAdjustedCusum::State cusum;
    double last_alarm_value = 0;
  };
  struct State {
    bool limits_set = false;
    std::vector<ChartState> charts;
    // Records waiting for the limits, and those past the buffer.
    std::vector<std::pair<double, int8_t>> buffered;
    int64_t skipped = 0;
  };
  static constexpr size_t kMaxNoteBytes = 4096;
  State state() const;
  // Replaces the state of charts made with the same options.
  // INVALID_ARGUMENT naming the chart and field, charts unchanged, unless
  // the charts are the ones the options ask for, in order; a limit is given
  // only once limits are set, and is finite and > 0; the chart's state fits
  // its limit (monitor/risk_adjusted_cusum.h); a chart without a limit has
  // counted nothing; notes are at most kMaxNoteBytes; the buffer holds at
  // most kMaxBuffered valid records and is empty once limits are set.
  absl::Status Restore(State state);

 private:
  struct Chart {
    std::string name;
    monitor::LogOddsChange alternative;
    std::optional<monitor::RiskAdjustedCusum> cusum;
    std::optional<monitor::ControlLimit> limit;
    std::string note;
    double last_alarm_value = 0;
  };
  void AddToCharts(double log_odds, int label);

  bool enabled_;
  bool limits_set_ = false;
  std::vector<Chart> charts_;
  std::vector<std::pair<double, int8_t>> buffered_;
  int64_t skipped_ = 0;  // past kMaxBuffered before the limits were known
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_HEALTH_CUSUM_CHARTS_H_
