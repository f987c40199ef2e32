#include "scorer/logistic.h"

#include <cmath>
#include <limits>

#include "gtest/gtest.h"
#include "tests/testing/json_file.h"

namespace plumbline {
namespace {

// Agreement within a few units in the last place, or absolutely for values so
// small that both sides sit in the subnormal range.
void ExpectClose(double expected, double actual, double x, const char* what) {
  const double tol = std::max(4e-16 * std::abs(expected), 1e-300);
  EXPECT_NEAR(expected, actual, tol) << what << " at x = " << x;
}

TEST(LogisticTest, MatchesScipyFromMinus1000To1000) {
  // Reference: SciPy scipy.special.expit and scipy.special.log_expit, written
  // by tests/scorer/logistic_reference.py in the same ctest run.
  const std::string path =
      testing::ReferencePathFromEnv("PLUMBLINE_LOGISTIC_REF");
  auto ref = testing::ReadJsonFile(path);
  ASSERT_TRUE(ref.ok()) << ref.status();
  auto x = testing::NumberList(*ref, "x");
  auto expit = testing::NumberList(*ref, "expit");
  auto log_expit = testing::NumberList(*ref, "log_expit");
  auto log_expit_neg = testing::NumberList(*ref, "log_expit_neg");
  ASSERT_TRUE(x.ok() && expit.ok() && log_expit.ok() && log_expit_neg.ok());
  ASSERT_GT(x->size(), 4000u);
  for (size_t i = 0; i < x->size(); ++i) {
    const double xi = (*x)[i];
    ExpectClose((*expit)[i], Logistic(xi), xi, "Logistic");
    ExpectClose((*log_expit)[i], LogLogistic(xi), xi, "LogLogistic");
    ExpectClose((*log_expit_neg)[i], LogLogistic(-xi), xi, "LogLogistic(-x)");
  }
}

TEST(LogisticTest, StaysFiniteAtExtremes) {
  for (double x : {-1e3, -1e5, -1e300, 1e3, 1e5, 1e300}) {
    EXPECT_TRUE(std::isfinite(Logistic(x))) << x;
    EXPECT_TRUE(std::isfinite(LogLogistic(x))) << x;
    EXPECT_GE(Logistic(x), 0.0);
    EXPECT_LE(Logistic(x), 1.0);
    EXPECT_LE(LogLogistic(x), 0.0);
  }
  // log(1 / (1 + e^1000)) = -1000 - log1p(e^-1000), which is -1000 in
  // double: an identity, not a recalled value.
  EXPECT_EQ(LogLogistic(-1000.0), -1000.0);
  EXPECT_EQ(Logistic(0.0), 0.5);
}

TEST(LogisticTest, SymmetryHoldsExactlyWhereRepresentable) {
  // Logistic(-x) = 1 - Logistic(x): exact identity of the function.
  for (double x = -30; x <= 30; x += 0.37) {
    EXPECT_NEAR(Logistic(-x), 1.0 - Logistic(x), 2e-16) << x;
  }
}

}  // namespace
}  // namespace plumbline
