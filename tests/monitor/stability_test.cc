#include "monitor/stability.h"

#include <cmath>
#include <optional>
#include <vector>

#include "gmock/gmock.h"
#include "gtest/gtest.h"

namespace plumbline::monitor {
namespace {

using ::testing::HasSubstr;

// Agreement with scipy.special.rel_entr is checked in reference_test.cc;
// these cases pin the conventions and the empty-bin rule.

TEST(BinnedBaselineTest, BinConventionFollowsTheSetFile) {
  // bin 0 = (-inf, 1), bin 1 = [1, 2), bin 2 = [2, inf).
  absl::StatusOr<BinnedBaseline> b =
      BinnedBaseline::Create({1, 2}, {0.3, 0.3, 0.4});
  ASSERT_TRUE(b.ok());
  EXPECT_EQ(b->BinOf(0.999), 0);
  EXPECT_EQ(b->BinOf(1.0), 1);
  EXPECT_EQ(b->BinOf(2.0), 2);
  EXPECT_EQ(b->BinOf(-INFINITY), 0);
  EXPECT_EQ(b->BinOf(INFINITY), 2);
}

TEST(BinnedBaselineTest, RefusesBadBaselines) {
  EXPECT_THAT(
      BinnedBaseline::Create({1, 1}, {0.3, 0.3, 0.4}).status().message(),
      HasSubstr("edges[1] = 1 does not exceed edges[0] = 1"));
  EXPECT_THAT(BinnedBaseline::Create({1}, {1.0}).status().message(),
              HasSubstr("1 edges need 2 proportions, got 1"));
  EXPECT_THAT(BinnedBaseline::Create({1}, {0.5, 0.6}).status().message(),
              HasSubstr("sum to 1.1"));
  EXPECT_THAT(BinnedBaseline::Create({NAN}, {0.5, 0.5}).status().message(),
              HasSubstr("edges[0] is nan"));
  EXPECT_THAT(CategoricalBaseline::Create({{"van", 0.5}, {"van", 0.5}})
                  .status()
                  .message(),
              HasSubstr("level \"van\" appears twice"));
}

TEST(PsiTest, EmptyBinsAreFlooredAtOneIn10000) {
  // Baseline (0.5, 0.5, 0); sample (1, 0, 0). After the floor:
  // e = (0.5, 0.5, 1e-4), a = (1, 1e-4, 1e-4).
  const double expected =
      (1 - 0.5) * std::log(1 / 0.5) + (1e-4 - 0.5) * std::log(1e-4 / 0.5) + 0.0;
  EXPECT_NEAR(PsiFromProportions(std::vector<double>{0.5, 0.5, 0},
                                 std::vector<double>{1, 0, 0}),
              expected, 1e-15);
  // Identical distributions: 0.
  EXPECT_EQ(PsiFromProportions(std::vector<double>{0.2, 0.8},
                               std::vector<double>{0.2, 0.8}),
            0.0);
}

TEST(NumericStabilityTest, RatesAndMissingValues) {
  absl::StatusOr<BinnedBaseline> b =
      BinnedBaseline::Create({1, 2}, {0.3, 0.3, 0.4});
  ASSERT_TRUE(b.ok());
  // 1 missing, 0.5 and 7 outside [1, 2] (the baseline's outer edges).
  const std::vector<double> values = {0.5, 1.5, NAN, 2.0, 7.0};
  absl::StatusOr<StabilityFigures> f = NumericStability(*b, values);
  ASSERT_TRUE(f.ok());
  EXPECT_EQ(f->count, 5);
  EXPECT_EQ(f->missing, 1);
  EXPECT_EQ(f->out_of_range, 2);
  EXPECT_DOUBLE_EQ(f->missing_rate, 0.2);
  EXPECT_DOUBLE_EQ(f->out_of_range_rate, 0.4);
  EXPECT_THAT(f->proportions, ::testing::ElementsAre(0.25, 0.25, 0.5));
  // With clip bounds [0, 10] nothing is out of range.
  f = NumericStability(*b, values, ValueRange{0, 10});
  ASSERT_TRUE(f.ok());
  EXPECT_EQ(f->out_of_range, 0);
}

TEST(NumericStabilityTest, AllMissingHasNoPsi) {
  absl::StatusOr<BinnedBaseline> b = BinnedBaseline::Create({1}, {0.5, 0.5});
  ASSERT_TRUE(b.ok());
  absl::StatusOr<StabilityFigures> f =
      NumericStability(*b, std::vector<double>{NAN, NAN});
  ASSERT_TRUE(f.ok());
  EXPECT_FALSE(f->psi.has_value());
  EXPECT_EQ(f->missing_rate, 1.0);
  EXPECT_THAT(
      PopulationStabilityIndex(*b, std::vector<double>{NAN}).status().message(),
      HasSubstr("all 1 values are missing"));
  EXPECT_EQ(NumericStability(*b, {}).status().code(),
            absl::StatusCode::kInvalidArgument);
}

TEST(CategoricalStabilityTest, UnseenLevelsShareOneBin) {
  absl::StatusOr<CategoricalBaseline> b =
      CategoricalBaseline::Create({{"van", 0.75}, {"car", 0.25}});
  ASSERT_TRUE(b.ok());
  const std::vector<std::optional<absl::string_view>> levels = {
      "van", "drone", "scooter", std::nullopt, "car"};
  absl::StatusOr<StabilityFigures> f = CategoricalStability(*b, levels);
  ASSERT_TRUE(f.ok());
  EXPECT_THAT(f->proportions, ::testing::ElementsAre(0.25, 0.25, 0.5));
  EXPECT_EQ(f->out_of_range, 2);
  EXPECT_EQ(f->missing, 1);
  EXPECT_NEAR(*f->psi,
              PsiFromProportions(std::vector<double>{0.75, 0.25, 0},
                                 std::vector<double>{0.25, 0.25, 0.5}),
              0);
}

}  // namespace
}  // namespace plumbline::monitor
