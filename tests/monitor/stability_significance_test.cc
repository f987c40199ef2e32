// File: tests/monitor/stability_significance_test.cc
//
// monitor::TestPsi and ChiSquareUpperQuantile: closed forms worked by hand,
// argument errors, and a simulation of stable multinomial samples whose
// rejection rate must match the level asked for. The SciPy comparison
// (chi2.sf / chi2.isf) is in alarm_reference_test.cc.
#include "monitor/stability_significance.h"

#include <cmath>
#include <cstdint>
#include <random>
#include <vector>

#include "gmock/gmock.h"
#include "gtest/gtest.h"
#include "monitor/stability.h"

namespace plumbline::monitor {
namespace {

using ::testing::HasSubstr;

TEST(StabilitySignificanceTest, TwoDegreesOfFreedomByHand) {
  // Hand computation: with 2 degrees of freedom (B = 3 bins) the chi-square
  // tail is exp(-x / 2), so p = exp(-stat / 2) and isf(alpha) = -2 ln(alpha).
  // n = 1000, m = 250: 1/n + 1/m = 0.001 + 0.004 = 0.005;
  // psi 0.03 -> stat 0.03 / 0.005 = 6, p = exp(-3) = 0.049787068367863944;
  // alpha 0.01 -> critical PSI = 2 ln(100) * 0.005 = 0.046051701859880914.
  absl::StatusOr<PsiSignificance> s = TestPsi(
      {.psi = 0.03, .baseline_count = 1000, .window_count = 250, .bins = 3},
      0.01);
  ASSERT_TRUE(s.ok()) << s.status();
  EXPECT_EQ(s->degrees_of_freedom, 2);
  EXPECT_NEAR(s->statistic, 6.0, 1e-13);
  EXPECT_NEAR(s->p_value, std::exp(-3.0), 1e-15);
  EXPECT_NEAR(s->critical_psi, 2 * std::log(100.0) * 0.005, 1e-15);
  EXPECT_FALSE(s->significant);  // 0.0498 >= 0.01
  EXPECT_EQ(s->alpha, 0.01);
}

TEST(StabilitySignificanceTest, OneDegreeOfFreedomIsASquaredNormal) {
  // Hand computation: chi-square with 1 dof is Z^2, so isf(0.05) is the
  // square of the normal's 97.5% point 1.959963984540054 (scipy
  // norm.isf(0.025)): 3.841458820694124; and the tail at x is erfc(sqrt(x/2)).
  absl::StatusOr<double> q = ChiSquareUpperQuantile(0.05, 1);
  ASSERT_TRUE(q.ok()) << q.status();
  EXPECT_NEAR(*q, 1.959963984540054 * 1.959963984540054, 1e-12);
  absl::StatusOr<PsiSignificance> s = TestPsi(
      {.psi = 0.01, .baseline_count = 400, .window_count = 400, .bins = 2},
      0.05);
  ASSERT_TRUE(s.ok()) << s.status();
  EXPECT_NEAR(s->statistic, 2.0, 1e-13);  // 0.01 / (2 / 400)
  EXPECT_NEAR(s->p_value, std::erfc(1.0), 1e-15);
}

TEST(StabilitySignificanceTest, CriticalPsiHasPValueAlpha) {
  // Consistency of the two directions: the p-value at the critical PSI is
  // alpha (Boost's inverse against the project's tail).
  for (int bins : {2, 5, 10, 20, 101}) {
    for (double alpha : {0.2, 0.05, 0.01, 1e-4, 1e-8}) {
      PsiCounts counts{.psi = 0,
                       .baseline_count = 20000,
                       .window_count = 3000,
                       .bins = bins};
      absl::StatusOr<PsiSignificance> s = TestPsi(counts, alpha);
      ASSERT_TRUE(s.ok()) << s.status();
      counts.psi = s->critical_psi;
      absl::StatusOr<PsiSignificance> at = TestPsi(counts, alpha);
      ASSERT_TRUE(at.ok()) << at.status();
      EXPECT_NEAR(at->p_value, alpha, 1e-10 * alpha)
          << "bins " << bins << " alpha " << alpha;
    }
  }
}

TEST(StabilitySignificanceTest, RefusesBadArguments) {
  const PsiCounts good{
      .psi = 0.1, .baseline_count = 10, .window_count = 10, .bins = 4};
  PsiCounts c = good;
  c.psi = -0.1;
  EXPECT_THAT(TestPsi(c, 0.05).status().message(), HasSubstr("psi is -0.1"));
  c = good;
  c.psi = NAN;
  EXPECT_EQ(TestPsi(c, 0.05).status().code(),
            absl::StatusCode::kInvalidArgument);
  c = good;
  c.window_count = 0;
  EXPECT_THAT(TestPsi(c, 0.05).status().message(), HasSubstr("window_count 0"));
  c = good;
  c.bins = 1;
  EXPECT_THAT(TestPsi(c, 0.05).status().message(), HasSubstr("bins is 1"));
  EXPECT_THAT(TestPsi(good, 1.0).status().message(), HasSubstr("alpha is 1"));
  EXPECT_THAT(TestPsi(good, 0.0).status().message(), HasSubstr("alpha is 0"));
  EXPECT_EQ(ChiSquareUpperQuantile(0.5, 0).status().code(),
            absl::StatusCode::kInvalidArgument);
}

// One multinomial sample of `count` records: counts per bin by successive
// conditional binomials.
std::vector<double> SampleProportions(const std::vector<double>& p,
                                      int64_t count, std::mt19937_64& rng) {
  std::vector<double> out(p.size());
  int64_t left = count;
  double mass_left = 1.0;
  for (size_t i = 0; i < p.size(); ++i) {
    int64_t k = left;
    if (i + 1 < p.size()) {
      std::binomial_distribution<int64_t> draw(left,
                                               std::min(1.0, p[i] / mass_left));
      k = draw(rng);
    }
    out[i] = static_cast<double>(k) / static_cast<double>(count);
    left -= k;
    mass_left -= p[i];
  }
  return out;
}

TEST(StabilitySignificanceTest, StableSamplesRejectAtTheStatedRate) {
  // Baseline (n = 20000) and window (m = 2000) drawn from one multinomial on
  // 10 unequal bins; PSI by monitor::PsiFromProportions (with its floor,
  // which never acts at these counts), test at alpha = 0.05. Fixed seed.
  // An independent NumPy run of the same design (100,000 repetitions) gave
  // a rejection rate of 0.0509 (rates 0.053 at m = 500 and 0.060 at n = 1000,
  // m = 200: the asymptotics are slightly anti-conservative at small counts).
  const std::vector<double> p = {0.05, 0.07, 0.08, 0.10, 0.10,
                                 0.10, 0.10, 0.12, 0.13, 0.15};
  constexpr int kRepetitions = 4000;
  constexpr double kAlpha = 0.05;
  std::mt19937_64 rng(20240917);
  int rejections = 0;
  for (int r = 0; r < kRepetitions; ++r) {
    const std::vector<double> baseline = SampleProportions(p, 20000, rng);
    const std::vector<double> window = SampleProportions(p, 2000, rng);
    absl::StatusOr<PsiSignificance> s =
        TestPsi({.psi = PsiFromProportions(baseline, window),
                 .baseline_count = 20000,
                 .window_count = 2000,
                 .bins = 10},
                kAlpha);
    ASSERT_TRUE(s.ok()) << s.status();
    rejections += s->significant ? 1 : 0;
  }
  // 99.9% normal-approximation binomial interval: z = 3.2905 (scipy
  // norm.isf(0.0005)), sd = sqrt(0.05 * 0.95 / 4000) = 0.003446, half-width
  // 0.01134.
  const double rate = static_cast<double>(rejections) / kRepetitions;
  const double half_width =
      3.2905 * std::sqrt(kAlpha * (1 - kAlpha) / kRepetitions);
  EXPECT_NEAR(rate, kAlpha, half_width) << rejections << " rejections";
}

}  // namespace
}  // namespace plumbline::monitor
