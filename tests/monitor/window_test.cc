#include "monitor/window.h"

#include <cstddef>
#include <vector>

#include "absl/time/time.h"
#include "gmock/gmock.h"
#include "gtest/gtest.h"
#include "monitor/metrics.h"
#include "monitor/outcome_accumulators.h"
#include "tests/monitor/test_streams.h"

namespace plumbline::monitor {
namespace {

using ::testing::HasSubstr;

absl::Time At(int64_t seconds) { return absl::FromUnixSeconds(seconds); }

TEST(CountWindowTest, OldRecordsLeaveABucketAtATime) {
  auto window = CountWindow<LossAccumulator>::Create(6, 3, LossAccumulator());
  ASSERT_TRUE(window.ok());
  EXPECT_EQ(window->bucket_records(), 2);
  std::vector<int64_t> sizes;
  for (int i = 0; i < 9; ++i) {
    ASSERT_TRUE(window->Add(0.0, i % 2).ok());
    sizes.push_back(window->size());
  }
  // Fills to 6, then each new bucket drops the oldest two records.
  EXPECT_THAT(sizes, ::testing::ElementsAre(1, 2, 3, 4, 5, 6, 5, 6, 5));
  EXPECT_EQ(window->Merged().count(), 5);
}

TEST(CountWindowTest, RefusedRecordLeavesTheWindowAlone) {
  auto window = CountWindow<LossAccumulator>::Create(2, 2, LossAccumulator());
  ASSERT_TRUE(window.ok());
  ASSERT_TRUE(window->Add(0.0, 1).ok());
  ASSERT_TRUE(window->Add(0.0, 0).ok());
  // The next record would start a new bucket; a bad one must not evict.
  EXPECT_THAT(window->Add(0.0, 5).message(), HasSubstr("label is 5"));
  EXPECT_EQ(window->size(), 2);
}

TEST(CountWindowTest, RefusesBadShapes) {
  EXPECT_EQ(CountWindow<LossAccumulator>::Create(10, 3, LossAccumulator())
                .status()
                .code(),
            absl::StatusCode::kInvalidArgument);
  EXPECT_EQ(CountWindow<LossAccumulator>::Create(0, 1, LossAccumulator())
                .status()
                .code(),
            absl::StatusCode::kInvalidArgument);
}

TEST(TimeWindowTest, BucketsAlignOnTheEpochAndExpireWhole) {
  // 60 s in 6 buckets of 10 s.
  auto window = TimeWindow<LossAccumulator>::Create(absl::Seconds(60), 6,
                                                    LossAccumulator());
  ASSERT_TRUE(window.ok());
  EXPECT_EQ(window->bucket_span(), absl::Seconds(10));
  ASSERT_TRUE(window->Add(At(1000), 0.0, 1).ok());  // bucket [1000, 1010)
  ASSERT_TRUE(window->Add(At(1009), 0.0, 0).ok());
  ASSERT_TRUE(window->Add(At(1035), 0.0, 1).ok());  // bucket [1030, 1040)
  EXPECT_EQ(window->size(At(1040)), 3);
  // At 1059 the window is buckets [1000, 1060): all three.
  EXPECT_EQ(window->size(At(1059)), 3);
  // At 1060 the bucket [1000, 1010) has left.
  EXPECT_EQ(window->size(At(1060)), 1);
  EXPECT_EQ(window->Merged(At(1060)).count(), 1);
  // At 1090 the bucket [1030, 1040) has left too.
  EXPECT_EQ(window->size(At(1090)), 0);
}

TEST(TimeWindowTest, OutOfOrderRecordsAndTooOldRecords) {
  auto window = TimeWindow<LossAccumulator>::Create(absl::Seconds(60), 6,
                                                    LossAccumulator());
  ASSERT_TRUE(window.ok());
  ASSERT_TRUE(window->Add(At(2000), 0.0, 1).ok());
  // Late but inside the ring: goes to its own bucket.
  ASSERT_TRUE(window->Add(At(1950), 0.0, 0).ok());
  EXPECT_EQ(window->size(At(2000)), 2);
  // Older than the ring (oldest bucket starts at 1950).
  absl::Status s = window->Add(At(1949), 0.0, 0);
  EXPECT_EQ(s.code(), absl::StatusCode::kOutOfRange);
  EXPECT_THAT(s.message(), HasSubstr("older than the window"));
  // A slot reused by a newer bucket drops the old bucket's records.
  ASSERT_TRUE(window->Add(At(2010), 0.0, 1).ok());  // reuses 1950's slot
  EXPECT_EQ(window->size(At(2010)), 2);
}

TEST(TimeWindowTest, MatchesThePureFunctionOnTheRecordsItCovers) {
  // One record per second over 1000 s into a 300 s window of 30 buckets;
  // at t = 1000 the window holds the records stamped in [710, 1010).
  const testing::Stream s = testing::MakeStream(1000, 3);
  absl::StatusOr<OutcomeAccumulator> empty = OutcomeAccumulator::Create({});
  ASSERT_TRUE(empty.ok());
  auto window =
      TimeWindow<OutcomeAccumulator>::Create(absl::Seconds(300), 30, *empty);
  ASSERT_TRUE(window.ok());
  for (size_t i = 0; i < s.log_odds.size(); ++i) {
    ASSERT_TRUE(
        window->Add(At(static_cast<int64_t>(i) + 1), s.log_odds[i], s.labels[i])
            .ok());
  }
  // Record i is stamped i + 1, so stamps 710..1000 are records 709..999.
  EXPECT_EQ(window->size(At(1000)), 291);
  absl::StatusOr<OutcomeFigures> f = window->Merged(At(1000)).Result();
  ASSERT_TRUE(f.ok());
  testing::ExpectClose(f->loss.log_loss,
                       *LogLoss(s.LogOdds(709, 1000), s.Labels(709, 1000)),
                       "log-loss");
}

TEST(TimeWindowTest, RefusesBadShapesAndTimes) {
  EXPECT_EQ(TimeWindow<LossAccumulator>::Create(absl::ZeroDuration(), 3,
                                                LossAccumulator())
                .status()
                .code(),
            absl::StatusCode::kInvalidArgument);
  auto window = TimeWindow<LossAccumulator>::Create(absl::Seconds(60), 6,
                                                    LossAccumulator());
  ASSERT_TRUE(window.ok());
  EXPECT_EQ(window->Add(absl::InfiniteFuture(), 0.0, 1).code(),
            absl::StatusCode::kInvalidArgument);
}

}  // namespace
}  // namespace plumbline::monitor
