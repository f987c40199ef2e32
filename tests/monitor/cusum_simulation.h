// File: tests/monitor/cusum_simulation.h
//
// Monte Carlo run lengths of a risk-adjusted CUSUM, the independent check of
// the Markov-chain ARL (monitor/cusum_run_length.h): records drawn from a
// RiskDistribution, outcomes from the truth, the real chart class run until
// it alarms. Deterministic for a seed; bounded work (each run stops at
// `max_records`, counted as censored). Test-only; not thread-safe.
#ifndef PLUMBLINE_TESTS_MONITOR_CUSUM_SIMULATION_H_
#define PLUMBLINE_TESTS_MONITOR_CUSUM_SIMULATION_H_

#include <cmath>
#include <cstdint>
#include <random>
#include <vector>

#include "gtest/gtest.h"
#include "monitor/cusum_run_length.h"
#include "monitor/risk_adjusted_cusum.h"
#include "scorer/logistic.h"

namespace plumbline::monitor::testing {

struct SimulatedRunLengths {
  double mean = 0;
  double standard_error = 0;  // of the mean: sd / sqrt(runs)
  int runs = 0;
  int censored = 0;  // runs stopped at max_records without an alarm
};

inline SimulatedRunLengths SimulateRunLengths(const LogOddsChange& alternative,
                                              double limit,
                                              const RiskDistribution& risks,
                                              const LogOddsChange& truth,
                                              int runs, uint64_t seed,
                                              int64_t max_records) {
  std::mt19937_64 rng(seed);
  std::discrete_distribution<size_t> pick(risks.weights().begin(),
                                          risks.weights().end());
  std::uniform_real_distribution<double> unit(0.0, 1.0);
  std::vector<double> outcome_probability;
  for (double z : risks.log_odds()) {
    outcome_probability.push_back(Logistic(truth.Apply(z)));
  }
  SimulatedRunLengths out;
  out.runs = runs;
  double sum = 0, sum_squares = 0;
  for (int r = 0; r < runs; ++r) {
    absl::StatusOr<RiskAdjustedCusum> chart =
        RiskAdjustedCusum::Create(alternative, limit);
    EXPECT_TRUE(chart.ok()) << chart.status();
    if (!chart.ok()) return out;
    int64_t t = 0;
    while (chart->alarms() == 0 && t < max_records) {
      const size_t i = pick(rng);
      const int y = unit(rng) < outcome_probability[i] ? 1 : 0;
      (void)chart->Add(risks.log_odds()[i], y);
      ++t;
    }
    if (chart->alarms() == 0) ++out.censored;
    const double length = static_cast<double>(t);
    sum += length;
    sum_squares += length * length;
  }
  out.mean = sum / runs;
  const double variance = (sum_squares - sum * out.mean) / (runs - 1);
  out.standard_error = std::sqrt(variance / runs);
  return out;
}

}  // namespace plumbline::monitor::testing

#endif  // PLUMBLINE_TESTS_MONITOR_CUSUM_SIMULATION_H_
