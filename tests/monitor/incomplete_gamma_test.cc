#include "monitor/incomplete_gamma.h"

#include <cmath>
#include <limits>

#include "gtest/gtest.h"

namespace plumbline::monitor {
namespace {

// Agreement with scipy.stats.chi2.sf over a grid is checked in
// reference_test.cc; these are closed forms of Q(a, x).
TEST(IncompleteGammaTest, ClosedForms) {
  for (double x : {1e-8, 0.3, 1.0, 2.5, 10.0, 80.0, 600.0}) {
    // Q(1, x) = e^-x.
    EXPECT_NEAR(*RegularizedUpperGamma(1, x), std::exp(-x),
                1e-15 * std::exp(-x))
        << x;
    // Q(1/2, x) = erfc(sqrt x).
    const double erfc = std::erfc(std::sqrt(x));
    EXPECT_NEAR(*RegularizedUpperGamma(0.5, x), erfc, 1e-13 * erfc) << x;
    // Q(2, x) = (1 + x) e^-x.
    const double q2 = (1 + x) * std::exp(-x);
    EXPECT_NEAR(*RegularizedUpperGamma(2, x), q2, 1e-14 * q2) << x;
  }
}

TEST(IncompleteGammaTest, Edges) {
  EXPECT_EQ(*RegularizedUpperGamma(3, 0), 1.0);
  EXPECT_EQ(*RegularizedUpperGamma(3, std::numeric_limits<double>::infinity()),
            0.0);
  EXPECT_EQ(*ChiSquareSurvival(0, 4), 1.0);
  EXPECT_EQ(*ChiSquareSurvival(-1, 4), 1.0);
  // Far in the tail the value underflows to 0 rather than failing.
  EXPECT_EQ(*ChiSquareSurvival(5000, 2), 0.0);
}

TEST(IncompleteGammaTest, RefusesBadArguments) {
  EXPECT_EQ(RegularizedUpperGamma(0, 1).status().code(),
            absl::StatusCode::kInvalidArgument);
  EXPECT_EQ(RegularizedUpperGamma(1, -1).status().code(),
            absl::StatusCode::kInvalidArgument);
  EXPECT_EQ(RegularizedUpperGamma(1, std::nan("")).status().code(),
            absl::StatusCode::kInvalidArgument);
  EXPECT_EQ(ChiSquareSurvival(1, 0).status().code(),
            absl::StatusCode::kInvalidArgument);
  EXPECT_EQ(ChiSquareSurvival(std::nan(""), 3).status().code(),
            absl::StatusCode::kInvalidArgument);
}

}  // namespace
}  // namespace plumbline::monitor
