// File: tests/daemon/health/pictures_test.cc
//
// The numbers behind the page's pictures in SetHealth: the reliability bins
// of a window equal monitor::EqualWidthReliability on the same records (the
// monitor's reference tests check that function against scikit-learn's
// calibration_curve), and the score and feature shares are hand counts of
// a few records over the baselines of tests/testing/health_test_sets.h.
#include "daemon/health/pictures.h"

#include <cmath>
#include <vector>

#include "daemon/health/monitor.h"
#include "gmock/gmock.h"
#include "gtest/gtest.h"
#include "monitor/reliability.h"
#include "scorer/logistic.h"
#include "tests/testing/health_test_sets.h"

namespace plumbline::daemon {
namespace {

using scorer::RawValue;
using ::testing::DoubleEq;
using ::testing::ElementsAre;

class PicturesTest : public ::testing::Test {
 protected:
  void SetUp() override {
    plan_ = testing::CompilePlan(testing::BaselineSetJson("courier", "v1"));
    ASSERT_NE(plan_, nullptr);
    HealthMonitorOptions options;
    options.now = [this] { return now_; };
    auto monitor = HealthMonitor::Create(std::move(options));
    ASSERT_TRUE(monitor.ok()) << monitor.status();
    monitor_ = *std::move(monitor);
    monitor_->SyncPlans({plan_});
  }

  absl::Time now_ = absl::FromUnixSeconds(1'800'000'000);
  std::shared_ptr<const scorer::ScoringPlan> plan_;
  std::unique_ptr<HealthMonitor> monitor_;
};

TEST_F(PicturesTest, ReliabilityBinsAreTheFixedBinTable) {
  const std::vector<double> log_odds = {-3.0, -1.2, -0.4, 0.0,  0.3,
                                        0.9,  1.7,  2.5,  -2.2, 0.05};
  const std::vector<int> labels = {0, 0, 1, 0, 1, 1, 1, 1, 0, 0};
  std::vector<double> p;
  for (size_t i = 0; i < log_odds.size(); ++i) {
    LabelledScore l;
    l.record_id = "r";
    l.set_name = "courier";
    l.set_version = "v1";
    l.log_odds = log_odds[i];
    l.label = labels[i];
    l.observed_at = now_;
    monitor_->OnLabelled(l);
    p.push_back(Logistic(log_odds[i]));
  }
  monitor_->Evaluate();
  absl::StatusOr<v1::SetHealth> h = monitor_->Health("courier");
  ASSERT_TRUE(h.ok()) << h.status();
  absl::StatusOr<monitor::ReliabilityTable> want =
      monitor::EqualWidthReliability(p, labels, 10);
  ASSERT_TRUE(want.ok()) << want.status();
  for (const v1::WindowHealth& w : h->windows()) {
    ASSERT_EQ(w.reliability_size(), 10) << w.window();
    for (int i = 0; i < 10; ++i) {
      const v1::ReliabilityBin& got = w.reliability(i);
      const monitor::ReliabilityBin& b = want->bins[static_cast<size_t>(i)];
      EXPECT_EQ(got.lower(), b.lower);
      EXPECT_EQ(got.upper(), b.upper);
      EXPECT_EQ(got.count(), b.count);
      EXPECT_EQ(got.positives(), b.positives);
      if (b.count > 0) {
        EXPECT_NEAR(got.mean_predicted(), b.mean_predicted, 1e-12);
        EXPECT_NEAR(got.observed_rate(), b.observed_rate, 1e-15);
      } else {
        EXPECT_EQ(got.mean_predicted(), 0);
      }
    }
  }
}

TEST_F(PicturesTest, SharesOverTheBaselineBins) {
  // distance_km baseline edges [2, 5]: 1 -> bin 0, 3 and 4 -> bin 1,
  // 9 -> bin 2: shares 1/4, 2/4, 1/4. region: urban, rural, rural,
  // "island" (unseen): 1/4, 2/4, 1/4.
  const double distances[] = {1, 3, 4, 9};
  const char* regions[] = {"urban", "rural", "rural", "island"};
  for (int i = 0; i < 4; ++i) {
    std::vector<RawValue> row = {RawValue::Number(distances[i]),
                                 RawValue::Text(regions[i]),
                                 RawValue::Number(10)};
    monitor_->OnScored(*plan_, row, -1.0, now_);
  }
  monitor_->Evaluate();
  absl::StatusOr<v1::SetHealth> h = monitor_->Health("courier");
  ASSERT_TRUE(h.ok()) << h.status();
  const v1::WindowHealth& w = h->windows(0);
  ASSERT_EQ(w.features_size(), 3);
  const v1::BinShares& d = w.features(0).shares();
  EXPECT_THAT(d.edges(), ElementsAre(2, 5));
  EXPECT_THAT(d.baseline(), ElementsAre(0.3, 0.4, 0.3));
  EXPECT_THAT(d.window(), ElementsAre(0.25, 0.5, 0.25));
  const v1::BinShares& r = w.features(1).shares();
  // Levels sorted by name (daemon/health/stability.h), then "unseen".
  EXPECT_THAT(r.levels(), ElementsAre("rural", "urban", "unseen"));
  EXPECT_THAT(r.baseline(), ElementsAre(0.4, 0.6, 0));
  EXPECT_THAT(r.window(), ElementsAre(0.5, 0.25, 0.25));
  // hour has no baseline: no shares.
  EXPECT_EQ(w.features(2).shares().window_size(), 0);
  // Every probability is logistic(-1) = 0.269 in [0.2, 0.5): bin 1.
  EXPECT_THAT(w.score_shares().edges(), ElementsAre(0.2, 0.5));
  EXPECT_THAT(w.score_shares().window(),
              ElementsAre(DoubleEq(0), DoubleEq(1), DoubleEq(0)));
}

}  // namespace
}  // namespace plumbline::daemon
