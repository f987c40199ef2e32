// File: tests/daemon/review/dossier_data_test.cc
//
// The dossier's holdout figures against scikit-learn (roc_reference.py, run
// by ctest in the same run): the ROC curve point for point (roc_curve with
// drop_intermediate=False), its AUC (roc_auc_score), the Brier score
// (brier_score_loss) and the log-loss (log_loss). Then the thinning of a
// long curve, and the trail of a dossier picked from a set's audit.
#include "daemon/review/dossier_data.h"

#include <cmath>
#include <string>
#include <vector>

#include "gmock/gmock.h"
#include "gtest/gtest.h"
#include "scorer/logistic.h"
#include "tests/testing/json_file.h"
#include "tests/testing/test_sets.h"

namespace plumbline::daemon {
namespace {

class RocReferenceTest : public ::testing::Test {
 protected:
  void SetUp() override {
    const std::string path =
        plumbline::testing::ReferencePathFromEnv("PLUMBLINE_ROC_REF");
    ASSERT_FALSE(path.empty());
    auto ref = plumbline::testing::ReadJsonFile(path);
    ASSERT_TRUE(ref.ok()) << ref.status();
    ref_ = *ref;
    auto z = plumbline::testing::NumberList(ref_, "log_odds");
    auto y = plumbline::testing::NumberList(ref_, "labels");
    ASSERT_TRUE(z.ok() && y.ok());
    z_ = *z;
    for (double v : *y) y_.push_back(static_cast<int>(v));
    for (double v : z_) p_.push_back(Logistic(v));
  }
  double Number(const char* key) {
    return ref_.fields().at(key).number_value();
  }
  google::protobuf::Struct ref_;
  std::vector<double> z_, p_;
  std::vector<int> y_;
};

TEST_F(RocReferenceTest, CurveIsScikitLearnsPointForPoint) {
  absl::StatusOr<std::vector<v1::RocPoint>> curve = RocCurve(p_, y_);
  ASSERT_TRUE(curve.ok()) << curve.status();
  auto fpr = plumbline::testing::NumberList(ref_, "fpr");
  auto tpr = plumbline::testing::NumberList(ref_, "tpr");
  auto thresholds = plumbline::testing::NumberList(ref_, "thresholds");
  ASSERT_TRUE(fpr.ok() && tpr.ok() && thresholds.ok());
  ASSERT_EQ(curve->size(), fpr->size());
  for (size_t i = 0; i < curve->size(); ++i) {
    // Counts over counts, divided the same way: equal to the last bit.
    EXPECT_EQ((*curve)[i].false_positive_rate(), (*fpr)[i]) << i;
    EXPECT_EQ((*curve)[i].true_positive_rate(), (*tpr)[i]) << i;
    if (i > 0) {
      // The probability of the group; numpy's exp and ours may differ in
      // the last bit.
      EXPECT_NEAR((*curve)[i].threshold(), (*thresholds)[i - 1], 1e-15) << i;
    }
  }
}

TEST_F(RocReferenceTest, HoldoutFiguresAreScikitLearns) {
  const std::shared_ptr<const scorer::ScoringPlan> plan =
      testing::CourierPlan();
  absl::StatusOr<v1::HoldoutFigures> f = HoldoutFiguresOf(*plan, z_, y_);
  ASSERT_TRUE(f.ok()) << f.status();
  EXPECT_NEAR(f->auc(), Number("auc"), 1e-12);
  EXPECT_NEAR(f->brier_score(), Number("brier"), 1e-12);
  EXPECT_NEAR(f->log_loss(), Number("log_loss"), 1e-12);
  EXPECT_EQ(f->records(), static_cast<int64_t>(y_.size()));
  ASSERT_EQ(f->reliability_size(), 10);
  int64_t in_bins = 0;
  for (const v1::ReliabilityBin& b : f->reliability()) in_bins += b.count();
  EXPECT_EQ(in_bins, f->records());
  // Trapezoids under the unthinned curve: the Mann-Whitney AUC.
  absl::StatusOr<std::vector<v1::RocPoint>> curve = RocCurve(p_, y_);
  ASSERT_TRUE(curve.ok());
  double area = 0;
  for (size_t i = 1; i < curve->size(); ++i) {
    const v1::RocPoint &a = (*curve)[i - 1], &b = (*curve)[i];
    area += (b.false_positive_rate() - a.false_positive_rate()) *
            (a.true_positive_rate() + b.true_positive_rate()) / 2;
  }
  EXPECT_NEAR(area, Number("auc"), 1e-12);
}

TEST(RocTest, OneClassAndBadInputAreRefused) {
  EXPECT_EQ(RocCurve({0.1, 0.2}, {1, 1}).status().code(),
            absl::StatusCode::kFailedPrecondition);
  EXPECT_EQ(RocCurve({0.1, 0.2}, {1}).status().code(),
            absl::StatusCode::kInvalidArgument);
  EXPECT_EQ(RocCurve({0.1, NAN}, {1, 0}).status().code(),
            absl::StatusCode::kInvalidArgument);
}

TEST(RocTest, ThinningKeepsTheEndsAndBoundsThePoints) {
  std::vector<v1::RocPoint> curve;
  for (int i = 0; i <= 10000; ++i) {
    v1::RocPoint p;
    p.set_false_positive_rate(i / 10000.0);
    p.set_true_positive_rate(std::sqrt(i / 10000.0));
    curve.push_back(p);
  }
  const std::vector<v1::RocPoint> thin = ThinRoc(curve, 100);
  // Each kept point moved >= 1/100 in one rate, and the rates sum to at
  // most 2 over the curve: at most 200 steps, plus the two ends.
  EXPECT_LE(thin.size(), 202u);
  EXPECT_GT(thin.size(), 50u);
  EXPECT_EQ(thin.front().false_positive_rate(), 0);
  EXPECT_EQ(thin.back().false_positive_rate(), 1);
  EXPECT_EQ(thin.back().true_positive_rate(), 1);
}

TEST(TrailTest, TheJobsRowsAndItsCandidatesOnly) {
  std::vector<AuditRecord> audit = {
      {absl::FromUnixSeconds(1), "courier", "v1", "loaded", "sets directory",
       ""},
      {absl::FromUnixSeconds(2), "courier", "refit-a-j3", "fit",
       "refit job 3 (drift)", "data"},
      {absl::FromUnixSeconds(3), "courier", "v1", "fit_failed",
       "refit job 13 (manual, bob)", "too few"},
      {absl::FromUnixSeconds(4), "courier", "refit-a-j3", "approved", "alice",
       "reviewed"}};
  v1::Dossier d;
  d.set_job(3);
  d.set_candidate_version("refit-a-j3");
  RefreshTrail(audit, absl::FromUnixSeconds(9), &d);
  ASSERT_EQ(d.trail_size(), 2);
  EXPECT_EQ(d.trail(0).action(), "fit");
  EXPECT_EQ(d.trail(1).action(), "approved");
  EXPECT_EQ(d.trail_as_of().seconds(), 9);
}

}  // namespace
}  // namespace plumbline::daemon
