// The fitter's refusals: each bad data set gets the documented status, a
// message naming the columns, and no coefficients.
#include <string>
#include <vector>

#include "gmock/gmock.h"
#include "gtest/gtest.h"
#include "scorer/fit.h"
#include "tests/scorer/fit_test_data.h"

namespace plumbline::scorer {
namespace {

using ::testing::AllOf;
using ::testing::HasSubstr;
using ::testing::Not;

const std::vector<std::string> kNames = {"distance_km", "weight_kg", "rain_mm"};

absl::Status FitStatus(const RowMatrix& x, const Eigen::VectorXd& y,
                       const FitOptions& options = {}) {
  absl::StatusOr<FitResult> fit =
      FitLogistic(x, y, Eigen::VectorXd(), kNames, options);
  return fit.ok() ? absl::OkStatus() : fit.status();
}

TEST(FitChecksTest, CompleteSeparationNamesTheColumn) {
  // rain_mm > 1 exactly when the label is 1: the log-likelihood tends to 0
  // as its coefficient grows, so no finite maximum exists.
  testing::SyntheticData data = testing::MakeSyntheticData(60, 3, 2);
  for (int i = 0; i < 60; ++i)
    data.x(i, 2) = data.y[i] == 1 ? 1.5 + i % 3 : 0.5 - i % 4;
  const absl::Status st = FitStatus(data.x, data.y);
  EXPECT_EQ(st.code(), absl::StatusCode::kFailedPrecondition);
  EXPECT_THAT(st.message(),
              AllOf(HasSubstr("complete separation"), HasSubstr("'rain_mm'"),
                    Not(HasSubstr("quasi"))));
}

TEST(FitChecksTest, QuasiCompleteSeparationNamesTheColumn) {
  // weight_kg is 1 only on rows labelled 1 (and 0 elsewhere, where both
  // labels occur): those rows are fitted perfectly as its coefficient grows.
  testing::SyntheticData data = testing::MakeSyntheticData(80, 3, 4);
  int flagged = 0;
  for (int i = 0; i < 80; ++i) {
    const bool flag = data.y[i] == 1 && i % 3 == 0;
    data.x(i, 1) = flag ? 1 : 0;
    flagged += flag;
  }
  ASSERT_GT(flagged, 3);
  const absl::Status st = FitStatus(data.x, data.y);
  EXPECT_EQ(st.code(), absl::StatusCode::kFailedPrecondition);
  EXPECT_THAT(
      st.message(),
      AllOf(HasSubstr("quasi-complete separation"), HasSubstr("'weight_kg'"),
            HasSubstr(std::to_string(flagged) + " of 80 rows")));
}

TEST(FitChecksTest, PenaltyMakesSeparatedDataFittable) {
  testing::SyntheticData data = testing::MakeSyntheticData(60, 3, 2);
  for (int i = 0; i < 60; ++i)
    data.x(i, 2) = data.y[i] == 1 ? 1.5 + i % 3 : 0.5 - i % 4;
  FitOptions options;
  options.l2_lambda = 1;
  absl::StatusOr<FitResult> fit =
      FitLogistic(data.x, data.y, Eigen::VectorXd(), kNames, options);
  ASSERT_TRUE(fit.ok()) << fit.status();
  EXPECT_TRUE(fit->converged);
}

TEST(FitChecksTest, ConstantColumnIsNamed) {
  testing::SyntheticData data = testing::MakeSyntheticData(50, 3, 6);
  data.x.col(0).setConstant(4.2);
  const absl::Status st = FitStatus(data.x, data.y);
  EXPECT_EQ(st.code(), absl::StatusCode::kFailedPrecondition);
  EXPECT_THAT(st.message(), AllOf(HasSubstr("column 'distance_km'"),
                                  HasSubstr("same value in every row")));
}

TEST(FitChecksTest, CollinearPairIsNamed) {
  testing::SyntheticData data = testing::MakeSyntheticData(50, 3, 8);
  data.x.col(2) = -3.0 * data.x.col(0) + Eigen::VectorXd::Constant(50, 12.0);
  const absl::Status st = FitStatus(data.x, data.y);
  EXPECT_EQ(st.code(), absl::StatusCode::kFailedPrecondition);
  EXPECT_THAT(
      st.message(),
      AllOf(HasSubstr("rank deficient"),
            HasSubstr("columns 'distance_km' and 'rain_mm' are collinear")));
}

TEST(FitChecksTest, LinearCombinationNamesEveryColumnInIt) {
  testing::SyntheticData data = testing::MakeSyntheticData(50, 3, 9);
  data.x.col(2) = 2.0 * data.x.col(0) - 0.5 * data.x.col(1);
  const absl::Status st = FitStatus(data.x, data.y);
  EXPECT_EQ(st.code(), absl::StatusCode::kFailedPrecondition);
  EXPECT_THAT(st.message(),
              HasSubstr("column 'rain_mm' is a linear combination of columns "
                        "'distance_km' and 'weight_kg'"));
}

TEST(FitChecksTest, AllLabelsEqual) {
  testing::SyntheticData data = testing::MakeSyntheticData(30, 3, 10);
  data.y.setOnes();
  const absl::Status st = FitStatus(data.x, data.y);
  EXPECT_EQ(st.code(), absl::StatusCode::kFailedPrecondition);
  EXPECT_THAT(st.message(), AllOf(HasSubstr("all labels are 1"),
                                  HasSubstr("collect rows with label 0")));
  // Rows with weight 0 do not count as variation.
  Eigen::VectorXd w = Eigen::VectorXd::Ones(30);
  data.y[0] = 0;
  w[0] = 0;
  absl::StatusOr<FitResult> fit = FitLogistic(data.x, data.y, w, kNames, {});
  EXPECT_EQ(fit.status().code(), absl::StatusCode::kFailedPrecondition);
}

TEST(FitChecksTest, WellPosedDataPassesEveryCheck) {
  // The checks must not fire on ordinary data with some strong signal.
  const testing::SyntheticData data =
      testing::MakeSyntheticData(2000, 3, 12, 3.0);
  EXPECT_TRUE(FitStatus(data.x, data.y).ok());
}

}  // namespace
}  // namespace plumbline::scorer
