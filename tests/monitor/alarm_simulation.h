// File: tests/monitor/alarm_simulation.h
//
// Simulated record streams driven through the monitor's alarm pieces, for
// the false-alarm test (alarm_simulation_test.cc) and the benchmark
// tests/bench/alarm_sim. A logistic model with three standard-normal
// features scores each record; a policy evaluates every
// `evaluation_records` records:
//   - PSI of the score and of each feature over a count window of
//     `window_buckets` evaluations' records, against deciles of a baseline
//     of `baseline_records` records, tested with monitor::TestPsi at
//     psi_alpha / 4 each (Bonferroni over the four tests);
//   - risk-adjusted CUSUMs on every record: upper (odds x R), lower
//     (odds / R) and optionally a slope chart, each with the limit for an
//     in-control ARL of `cusum_arl` records (monitor::ChooseControlLimit on
//     the baseline's log-odds);
//   - a DriftStateMachine whose drifting condition is "any signal".
// Deterministic for a seed. Test-only; not thread-safe.
#ifndef PLUMBLINE_TESTS_MONITOR_ALARM_SIMULATION_H_
#define PLUMBLINE_TESTS_MONITOR_ALARM_SIMULATION_H_

#include <array>
#include <cstdint>
#include <string>
#include <vector>

#include "absl/status/statusor.h"
#include "monitor/cusum_run_length.h"
#include "monitor/risk_adjusted_cusum.h"

namespace plumbline::monitor::testing {

struct AlarmPolicyOptions {
  int evaluation_records = 1000;  // records between evaluations (a bucket)
  int window_buckets = 5;         // PSI window = this many buckets
  int64_t baseline_records = 20000;
  double psi_alpha = 0.01;          // per evaluation, over the four PSI tests
  double psi_effect_size = 0;       // also require PSI >= this (0: off)
  double cusum_arl = 100000;        // in-control ARL of each chart, records
  double odds_ratio = 1.5;          // upper chart R_A; the lower uses 1/R_A
  double slope_alternative = 0.75;  // slope chart's alternative; 0: no chart
  int release_evaluations = 3;
};

// A change of the population, starting at a stream's onset.
struct PopulationShift {
  std::string name;
  double outcome_shift = 0;  // true log-odds = slope * z + shift
  double outcome_slope = 1;
  double feature_shift_sd = 0;  // mean shift of feature 0, in SDs
};

// Signals of the components, in this order.
enum Component { kPsi = 0, kUpper, kLower, kSlope, kComponents };
const char* ComponentName(int component);

struct StableCounts {
  int64_t records = 0;      // after each stream's window filled
  int64_t evaluations = 0;  // evaluations with a full window
  // PSI tests significant, per test (score, feature 0, 1, 2).
  std::array<int64_t, 4> psi_test_signals{};
  // Evaluations with the component's signal (CUSUM: >= 1 alarm since the
  // last evaluation).
  std::array<int64_t, kComponents> evaluation_signals{};
  std::array<int64_t, kComponents> alarms{};  // CUSUM alarms (PSI: unused)
  int64_t any_signal = 0;                     // evaluations with any signal
  int64_t drifting_entries = 0;  // DriftStateMachine entries into drifting
};

struct DetectionResult {
  int64_t records = -1;  // records after onset to the first signal; -1: none
  int component = -1;    // which fired first
};

class AlarmSimulator {
 public:
  // Computes the CUSUM limits (about a second each).
  static absl::StatusOr<AlarmSimulator> Create(
      const AlarmPolicyOptions& options, uint64_t seed);

  // `streams` stable streams of `records` records each, every stream with
  // its own baseline drawn from the same population (so the PSI rates are
  // the unconditional ones the test states).
  StableCounts RunStable(int streams, int64_t records, uint64_t seed) const;

  // One shifted stream: a fresh baseline, a PSI window filled with stable
  // records, fresh charts at the onset; at most max_records after onset.
  DetectionResult RunShift(const PopulationShift& shift, int64_t max_records,
                           uint64_t seed) const;

  const AlarmPolicyOptions& options() const { return options_; }
  // Limits of the CUSUM components (kUpper..kSlope); 0 when off.
  double limit(int component) const { return limits_[component]; }
  const RunLengthEstimate& in_control_arl(int component) const {
    return arls_[component];
  }
  bool has_component(int component) const {
    return component == kPsi || limits_[component] > 0;
  }
  // The alternative of a CUSUM component.
  LogOddsChange alternative(int component) const;
  // The risk distribution the limits were computed on.
  absl::StatusOr<RiskDistribution> risks() const {
    return RiskDistribution::FromLogOdds(risk_log_odds_);
  }

 private:
  explicit AlarmSimulator(const AlarmPolicyOptions& options)
      : options_(options) {}

  AlarmPolicyOptions options_;
  std::array<double, kComponents> limits_{};
  std::array<RunLengthEstimate, kComponents> arls_{};
  std::vector<double> risk_log_odds_;
};

}  // namespace plumbline::monitor::testing

#endif  // PLUMBLINE_TESTS_MONITOR_ALARM_SIMULATION_H_
