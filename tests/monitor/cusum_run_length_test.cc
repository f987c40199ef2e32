// File: tests/monitor/cusum_run_length_test.cc
//
// The Markov-chain ARL and the control limit: a case worked by hand, and
// Monte Carlo runs of the real chart (tests/monitor/cusum_simulation.h) that
// must agree with the stated ARL within their confidence interval. The
// NumPy simulation of the same kind is compared in alarm_reference_test.cc.
#include "monitor/cusum_run_length.h"

#include <algorithm>
#include <cmath>
#include <ostream>
#include <random>
#include <string>
#include <vector>

#include "gmock/gmock.h"
#include "gtest/gtest.h"
#include "scorer/logistic.h"
#include "tests/monitor/cusum_simulation.h"

namespace plumbline::monitor {
namespace {

using ::testing::HasSubstr;

// 99.9% two-sided normal quantile, scipy.stats.norm.isf(0.0005).
constexpr double kZ999 = 3.2905267314919255;

// 2000 seeded log-odds from N(-1.5, 1): a model with about 22% positives.
RiskDistribution NormalRisks() {
  std::mt19937_64 rng(7);
  std::normal_distribution<double> draw(-1.5, 1.0);
  std::vector<double> z(2000);
  for (double& v : z) v = draw(rng);
  absl::StatusOr<RiskDistribution> risks = RiskDistribution::FromLogOdds(z);
  EXPECT_TRUE(risks.ok()) << risks.status();
  return *risks;
}

TEST(CusumRunLengthTest, TwoSuccessesInARowByHand) {
  // p = 0.5 for every record and R_A = e^4: 1 - p + R_A p = (1 + e^4) / 2 =
  // 27.799075, so W = 4 - 3.325 = +0.675 for y = 1 and -3.325 for y = 0.
  // With h = 1 one y = 0 always returns the chart to 0 and two y = 1 in a
  // row alarm: the run length is the waiting time for 2 successes in a row
  // with q = 1/2, E = (q^-2 - 1) / (1 - q) = (4 - 1) / 0.5 = 6 (Feller,
  // by hand). The lattice represents this case exactly.
  absl::StatusOr<RiskDistribution> risks =
      RiskDistribution::FromLogOdds(std::vector<double>{0.0});
  ASSERT_TRUE(risks.ok());
  absl::StatusOr<RunLengthEstimate> arl =
      AverageRunLength({.shift = 4, .slope = 1}, 1.0, *risks);
  ASSERT_TRUE(arl.ok()) << arl.status();
  EXPECT_NEAR(arl->value, 6.0, 1e-9);
  EXPECT_NEAR(arl->discretisation_error, 0.0, 1e-9);
  // Truth with q = logistic(log 3) = 3/4: E = (16/9 - 1) / (1/4) = 28/9.
  absl::StatusOr<RunLengthEstimate> shifted = AverageRunLength(
      {.shift = 4, .slope = 1}, 1.0, *risks, {.shift = std::log(3.0)});
  ASSERT_TRUE(shifted.ok()) << shifted.status();
  EXPECT_NEAR(shifted->value, 28.0 / 9.0, 1e-9);
}

struct ChartCase {
  std::string name;
  LogOddsChange alternative;
  LogOddsChange shifted_truth;  // a change the chart is meant to see
};
void PrintTo(const ChartCase& c, std::ostream* os) { *os << c.name; }

class ControlLimitTest : public ::testing::TestWithParam<ChartCase> {};

TEST_P(ControlLimitTest, SimulatedInControlArlMatchesTheTarget) {
  const RiskDistribution risks = NormalRisks();
  constexpr double kTarget = 500;
  absl::StatusOr<ControlLimit> h =
      ChooseControlLimit(GetParam().alternative, kTarget, risks);
  ASSERT_TRUE(h.ok()) << h.status();
  EXPECT_NEAR(h->arl.value, kTarget, 1e-3 * kTarget);
  EXPECT_LT(h->arl.discretisation_error, 0.005 * kTarget);
  // Reference: 4000 Monte Carlo runs of the chart itself (seeded); the
  // stated ARL must lie in the 99.9% interval of the simulated mean
  // widened by the stated discretisation error.
  const testing::SimulatedRunLengths sim = testing::SimulateRunLengths(
      GetParam().alternative, h->limit, risks, {}, 4000, 11, 100 * kTarget);
  EXPECT_EQ(sim.censored, 0);
  EXPECT_NEAR(sim.mean, h->arl.value,
              kZ999 * sim.standard_error + h->arl.discretisation_error)
      << "limit " << h->limit << " simulated " << sim.mean << " +- "
      << sim.standard_error;
}

TEST_P(ControlLimitTest, SimulatedShiftedArlMatchesTheChain) {
  // Out of control: outcomes from the case's shifted truth.
  const RiskDistribution risks = NormalRisks();
  absl::StatusOr<ControlLimit> h =
      ChooseControlLimit(GetParam().alternative, 2000, risks);
  ASSERT_TRUE(h.ok()) << h.status();
  const LogOddsChange truth = GetParam().shifted_truth;
  absl::StatusOr<RunLengthEstimate> arl =
      AverageRunLength(GetParam().alternative, h->limit, risks, truth);
  ASSERT_TRUE(arl.ok()) << arl.status();
  const testing::SimulatedRunLengths sim = testing::SimulateRunLengths(
      GetParam().alternative, h->limit, risks, truth, 4000, 12, 100000);
  EXPECT_EQ(sim.censored, 0);
  EXPECT_NEAR(sim.mean, arl->value,
              kZ999 * sim.standard_error + arl->discretisation_error)
      << "ARL " << arl->value << " simulated " << sim.mean << " +- "
      << sim.standard_error;
}

INSTANTIATE_TEST_SUITE_P(
    Charts, ControlLimitTest,
    ::testing::Values(
        ChartCase{"upper", LogOddsChange::OddsRatio(1.5), {.shift = 0.5}},
        ChartCase{"lower", LogOddsChange::OddsRatio(1 / 1.5), {.shift = -0.5}},
        ChartCase{"slope",
                  LogOddsChange{.shift = 0, .slope = 0.75},
                  {.shift = 0, .slope = 0.8}}),
    [](const ::testing::TestParamInfo<ChartCase>& param) {
      return param.param.name;
    });

TEST(CusumRunLengthTest, HistogramOfTheBaselineGivesNearlyTheSameLimit) {
  // The score baseline of a set holds probability deciles, not the scores.
  // The limit from the histogram (16 points per decile) against the limit
  // from the 2000 scores themselves: the ARL of the histogram's limit,
  // computed on the full sample, is within 5% of the target (our sanity
  // bound, not a published figure; measured 1-2%).
  const RiskDistribution risks = NormalRisks();
  std::vector<double> p;
  for (double z : risks.log_odds()) p.push_back(Logistic(z));
  std::sort(p.begin(), p.end());
  std::vector<double> edges;
  for (int d = 1; d < 10; ++d) edges.push_back(p[p.size() * d / 10]);
  const std::vector<double> proportions(10, 0.1);
  absl::StatusOr<RiskDistribution> histogram =
      RiskDistribution::FromProbabilityHistogram(edges, proportions, p.front(),
                                                 p.back());
  ASSERT_TRUE(histogram.ok()) << histogram.status();
  absl::StatusOr<ControlLimit> h =
      ChooseControlLimit(LogOddsChange::OddsRatio(1.5), 10000, *histogram);
  ASSERT_TRUE(h.ok()) << h.status();
  absl::StatusOr<RunLengthEstimate> arl =
      AverageRunLength(LogOddsChange::OddsRatio(1.5), h->limit, risks);
  ASSERT_TRUE(arl.ok()) << arl.status();
  EXPECT_NEAR(arl->value, 10000, 500) << "limit " << h->limit;
}

TEST(CusumRunLengthTest, RefusesBadArguments) {
  const RiskDistribution risks = NormalRisks();
  const LogOddsChange upper = LogOddsChange::OddsRatio(1.5);
  EXPECT_THAT(ChooseControlLimit(upper, 1.0, risks).status().message(),
              HasSubstr("in_control_arl is 1"));
  EXPECT_THAT(AverageRunLength(upper, 3.0, risks, {}, {.lattice_states = 5})
                  .status()
                  .message(),
              HasSubstr("lattice_states is 5"));
  EXPECT_THAT(AverageRunLength(upper, -1, risks).status().message(),
              HasSubstr("limit is -1"));
  EXPECT_THAT(RiskDistribution::FromLogOdds(std::vector<double>{0.0, INFINITY})
                  .status()
                  .message(),
              HasSubstr("log_odds[1] is inf"));
  EXPECT_THAT(RiskDistribution::FromProbabilityHistogram(
                  std::vector<double>{0.3, 0.2},
                  std::vector<double>{0.3, 0.3, 0.4}, 0.1, 0.9)
                  .status()
                  .message(),
              HasSubstr("edges[1] is 0.2"));
}

}  // namespace
}  // namespace plumbline::monitor
