// File: tests/monitor/alarm_simulation_test.cc
//
// The stated false-alarm rates hold in a short simulation of stable
// streams (tests/monitor/alarm_simulation.h): each PSI test rejects at its
// level, and each CUSUM alarms once per stated in-control ARL. A rate check
// with a binomial interval, never a timing. The long version with shifts is
// the benchmark tests/bench/alarm_sim.
#include "tests/monitor/alarm_simulation.h"

#include <cmath>

#include "gtest/gtest.h"

namespace plumbline::monitor::testing {
namespace {

// 99.9% two-sided normal quantile, scipy.stats.norm.isf(0.0005).
constexpr double kZ999 = 3.2905267314919255;

// Half-width of the 99.9% normal-approximation binomial interval of a rate
// p measured on n independent trials.
double HalfWidth(double p, double n) {
  return kZ999 * std::sqrt(p * (1 - p) / n);
}

TEST(AlarmSimulationTest, StableFalseAlarmRatesMatchTheStatedOnes) {
  AlarmPolicyOptions options;
  options.evaluation_records = 1000;
  options.window_buckets = 1;       // one window per stream: independent
  options.baseline_records = 5000;  // n; the window is m = 1000
  options.psi_alpha = 0.2;          // 0.05 per PSI test (Bonferroni, 4)
  options.cusum_arl = 1000;
  absl::StatusOr<AlarmSimulator> sim = AlarmSimulator::Create(options, 1);
  ASSERT_TRUE(sim.ok()) << sim.status();

  // PSI: 1000 streams, each with its own baseline and one evaluation, so
  // the 1000 outcomes of each test are independent Bernoulli(0.05) trials
  // under the asymptotics (the NumPy check in stability_significance_test
  // measured 0.051 at these counts).
  const StableCounts psi = sim->RunStable(1000, 1000, 100);
  ASSERT_EQ(psi.evaluations, 1000);
  for (int q = 0; q < 4; ++q) {
    const double rate = static_cast<double>(psi.psi_test_signals[q]) / 1000;
    EXPECT_NEAR(rate, 0.05, HalfWidth(0.05, 1000)) << "PSI test " << q;
  }

  // CUSUM: 20 streams of 50,000 records; alarms per record against the
  // stated 1 / ARL0 (renewal: alarms in L records ~ L / ARL0), with the
  // binomial interval over the records (the run lengths are close to
  // geometric, so the count's variance is at most the binomial one).
  const StableCounts cusum = sim->RunStable(20, 50000, 200);
  for (int c = kUpper; c < kComponents; ++c) {
    const double rate = static_cast<double>(cusum.alarms[c]) /
                        static_cast<double>(cusum.records);
    const double stated = 1.0 / sim->in_control_arl(c).value;
    EXPECT_NEAR(rate, stated,
                HalfWidth(stated, static_cast<double>(cusum.records)) +
                    stated * sim->in_control_arl(c).discretisation_error /
                        sim->in_control_arl(c).value)
        << ComponentName(c) << ": " << cusum.alarms[c] << " alarms in "
        << cusum.records << " records";
  }
}

}  // namespace
}  // namespace plumbline::monitor::testing
