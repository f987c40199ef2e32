// File: tests/monitor/labelled_record_store_test.cc
//
// The bounded store of a window's records: capacity, refusals, merging per
// window bucket, and its figures equal to the pure functions on the same
// records. The figures against scikit-learn and statsmodels are in
// alarm_reference_test.cc.
#include "monitor/labelled_record_store.h"

#include <vector>

#include "gmock/gmock.h"
#include "gtest/gtest.h"
#include "monitor/auc.h"
#include "monitor/window.h"
#include "tests/monitor/test_streams.h"

namespace plumbline::monitor {
namespace {

using ::testing::HasSubstr;

TEST(LabelledRecordStoreTest, RefusesPastCapacityAndSaysSo) {
  absl::StatusOr<LabelledRecordStore> store = LabelledRecordStore::Create(2);
  ASSERT_TRUE(store.ok()) << store.status();
  EXPECT_TRUE(store->Add(-1.0, 0).ok());
  EXPECT_TRUE(store->Add(1.0, 1).ok());
  absl::Status full = store->Add(0.5, 1);
  EXPECT_EQ(full.code(), absl::StatusCode::kResourceExhausted);
  EXPECT_THAT(full.message(), HasSubstr("capacity of 2 records"));
  EXPECT_EQ(store->size(), 2);
  EXPECT_EQ(store->refused(), 1);
  absl::StatusOr<ExactOutcomeFigures> f = store->Result(3);
  ASSERT_TRUE(f.ok()) << f.status();
  EXPECT_EQ(f->count, 2);
  EXPECT_EQ(f->refused, 1);
  EXPECT_EQ(f->positives, 1);
  ASSERT_TRUE(f->auc.ok());
  EXPECT_EQ(*f->auc, 1.0);  // the positive outranks the negative
  EXPECT_EQ(f->hosmer_lemeshow.status().code(),
            absl::StatusCode::kFailedPrecondition);  // 2 groups only
}

TEST(LabelledRecordStoreTest, RefusesBadRecordsAndOptions) {
  EXPECT_THAT(LabelledRecordStore::Create(0).status().message(),
              HasSubstr("capacity is 0"));
  absl::StatusOr<LabelledRecordStore> store = LabelledRecordStore::Create(5);
  ASSERT_TRUE(store.ok());
  EXPECT_THAT(store->Add(0.0, 3).message(), HasSubstr("label is 3"));
  EXPECT_THAT(store->Add(INFINITY, 1).message(), HasSubstr("log-odds"));
  EXPECT_EQ(store->refused(), 0);
  EXPECT_EQ(store->Result().status().code(),
            absl::StatusCode::kFailedPrecondition);
  ASSERT_TRUE(store->Add(0.0, 1).ok());
  EXPECT_THAT(store->Result(2).status().message(),
              HasSubstr("hosmer_lemeshow_groups is 2"));
}

TEST(LabelledRecordStoreTest, CountWindowOfStoresHoldsExactlyTheWindow) {
  // A window of 10,000 records in 10 buckets of capacity 1,000 after 23,456
  // records: its merged store equals the pure functions over the last
  // 9,457 records (the window keeps N - c + 1 to N, see window.h), with
  // nothing refused.
  const testing::Stream stream = testing::MakeStream(23456, 3);
  absl::StatusOr<LabelledRecordStore> empty = LabelledRecordStore::Create(1000);
  ASSERT_TRUE(empty.ok());
  absl::StatusOr<CountWindow<LabelledRecordStore>> window =
      CountWindow<LabelledRecordStore>::Create(10000, 10, *empty);
  ASSERT_TRUE(window.ok()) << window.status();
  for (size_t i = 0; i < stream.log_odds.size(); ++i) {
    ASSERT_TRUE(window->Add(stream.log_odds[i], stream.labels[i]).ok());
  }
  const LabelledRecordStore merged = window->Merged();
  EXPECT_EQ(merged.size(), window->size());
  EXPECT_EQ(merged.refused(), 0);
  EXPECT_EQ(merged.capacity(), 11000);  // ten buckets plus the empty start
  const size_t begin =
      stream.log_odds.size() - static_cast<size_t>(merged.size());
  const auto z = stream.LogOdds(begin, stream.log_odds.size());
  const auto y = stream.Labels(begin, stream.log_odds.size());
  absl::StatusOr<ExactOutcomeFigures> f = merged.Result();
  ASSERT_TRUE(f.ok()) << f.status();
  // The same records in another order (bucket order): the AUC is exact in
  // 128-bit counts, so equal to the last bit; the others to 1e-12.
  absl::StatusOr<double> auc = Auc(z, y);
  ASSERT_TRUE(auc.ok() && f->auc.ok());
  EXPECT_EQ(*f->auc, *auc);
  const std::vector<double> p = testing::Probabilities(z);
  absl::StatusOr<HosmerLemeshowResult> hl = HosmerLemeshowDecilesOfRisk(p, y);
  ASSERT_TRUE(hl.ok() && f->hosmer_lemeshow.ok());
  testing::ExpectClose(f->hosmer_lemeshow->statistic, hl->statistic, "HL");
  absl::StatusOr<CalibrationInterceptFit> a = CalibrationIntercept(z, y);
  ASSERT_TRUE(a.ok() && f->calibration_intercept.ok());
  testing::ExpectClose(f->calibration_intercept->intercept, a->intercept,
                       "intercept", 1e-10);
  absl::StatusOr<CalibrationFit> b = CalibrationInterceptSlope(z, y);
  ASSERT_TRUE(b.ok() && f->calibration_slope.ok());
  testing::ExpectClose(f->calibration_slope->slope, b->slope, "slope", 1e-10);
}

TEST(LabelledRecordStoreTest, MergeAddsCapacitiesAndRefusals) {
  absl::StatusOr<LabelledRecordStore> a = LabelledRecordStore::Create(1);
  absl::StatusOr<LabelledRecordStore> b = LabelledRecordStore::Create(3);
  ASSERT_TRUE(a.ok() && b.ok());
  ASSERT_TRUE(a->Add(0.3, 1).ok());
  EXPECT_FALSE(a->Add(0.4, 0).ok());
  ASSERT_TRUE(b->Add(-0.3, 0).ok());
  ASSERT_TRUE(a->Merge(*b).ok());
  EXPECT_EQ(a->capacity(), 4);
  EXPECT_EQ(a->size(), 2);
  EXPECT_EQ(a->refused(), 1);
}

}  // namespace
}  // namespace plumbline::monitor
