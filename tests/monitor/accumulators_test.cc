// File: tests/monitor/accumulators_test.cc
//
// The streaming accumulators, read through a CountWindow, against the pure
// functions on exactly the records the window holds: windows of 1, 10, 1000
// and 1,000,000 records, streams 1.5 times longer so old buckets have left.
// Exact figures agree to 1e-12; grid figures agree to 1e-12 with the pure
// functions on the grid-quantised log-odds (monitor/score_grid.h).
#include <algorithm>
#include <cstddef>
#include <cstdint>
#include <memory>
#include <string>
#include <vector>

#include "absl/status/statusor.h"
#include "absl/strings/str_cat.h"
#include "gmock/gmock.h"
#include "gtest/gtest.h"
#include "monitor/auc.h"
#include "monitor/calibration_fit.h"
#include "monitor/hosmer_lemeshow.h"
#include "monitor/metrics.h"
#include "monitor/outcome_accumulators.h"
#include "monitor/reliability.h"
#include "monitor/stability.h"
#include "monitor/stability_accumulators.h"
#include "monitor/window.h"
#include "scorer/logistic.h"
#include "tests/monitor/test_streams.h"

namespace plumbline::monitor {
namespace {

using testing::ExpectClose;
using ::testing::HasSubstr;
using testing::MakeStream;
using testing::Probabilities;
using testing::Quantised;
using testing::SameOutcome;
using testing::Stream;

void ExpectSameTable(const ReliabilityTable& streamed,
                     const ReliabilityTable& pure, const std::string& what) {
  ASSERT_EQ(streamed.bins.size(), pure.bins.size()) << what;
  EXPECT_EQ(streamed.count, pure.count) << what;
  for (size_t b = 0; b < pure.bins.size(); ++b) {
    const std::string bin = absl::StrCat(what, " bin ", b);
    EXPECT_EQ(streamed.bins[b].lower, pure.bins[b].lower) << bin;
    EXPECT_EQ(streamed.bins[b].upper, pure.bins[b].upper) << bin;
    EXPECT_EQ(streamed.bins[b].count, pure.bins[b].count) << bin;
    EXPECT_EQ(streamed.bins[b].positives, pure.bins[b].positives) << bin;
    ExpectClose(streamed.bins[b].sum_predicted, pure.bins[b].sum_predicted,
                bin);
  }
}

// The equal-count table the grid should produce: membership (edges, counts,
// positives) from the pure function on the quantised probabilities, each
// bin's predicted sum from the records' exact probabilities.
ReliabilityTable GridEqualCountReference(absl::Span<const double> exact_p,
                                         absl::Span<const double> quantised_p,
                                         absl::Span<const int> labels,
                                         int bins) {
  absl::StatusOr<ReliabilityTable> on_grid =
      EqualCountReliability(quantised_p, labels, bins);
  EXPECT_TRUE(on_grid.ok()) << on_grid.status();
  std::vector<double> edges;
  for (const ReliabilityBin& b : on_grid->bins) edges.push_back(b.lower);
  edges.push_back(on_grid->bins.back().upper);
  std::vector<BinSums> sums(bins);
  for (size_t i = 0; i < exact_p.size(); ++i) {
    sums[ReliabilityBinOf(edges, quantised_p[i])].Add(exact_p[i], labels[i]);
  }
  return MakeReliabilityTable(edges, sums);
}

void CheckOutcomeFigures(const OutcomeAccumulator& acc, const Stream& s,
                         size_t begin, size_t end, const std::string& what) {
  const absl::Span<const double> z = s.LogOdds(begin, end);
  const absl::Span<const int> y = s.Labels(begin, end);
  const std::vector<double> p = Probabilities(z);
  absl::StatusOr<OutcomeFigures> f = acc.Result();
  ASSERT_TRUE(f.ok()) << f.status();
  ASSERT_EQ(f->loss.count, static_cast<int64_t>(z.size())) << what;

  // Exact sums.
  ExpectClose(f->loss.log_loss, *LogLoss(z, y), what + " log-loss");
  ExpectClose(f->loss.brier_score, *BrierScore(p, y), what + " Brier");
  ExpectClose(f->loss.calibration_in_the_large, *CalibrationInTheLarge(p, y),
              what + " calibration-in-the-large");
  absl::StatusOr<ReliabilityTable> fixed = EqualWidthReliability(p, y, 10);
  ASSERT_TRUE(fixed.ok());
  ExpectSameTable(f->fixed_bins.table, *fixed, what + " equal-width");
  ExpectClose(f->fixed_bins.expected_calibration_error,
              ExpectedCalibrationError(*fixed), what + " ECE");
  absl::StatusOr<HosmerLemeshowResult> fixed_hl =
      HosmerLemeshowFromTable(*fixed);
  if (SameOutcome(f->fixed_bins.hosmer_lemeshow, fixed_hl, what + " HL")) {
    ExpectClose(f->fixed_bins.hosmer_lemeshow->statistic, fixed_hl->statistic,
                what + " fixed-bin HL");
    ExpectClose(f->fixed_bins.hosmer_lemeshow->p_value, fixed_hl->p_value,
                what + " fixed-bin HL p", 1e-12, 1e-300);
  }

  // Grid figures against the pure functions on the quantised log-odds.
  const std::vector<double> q = Quantised(acc.grid().grid(), z);
  const std::vector<double> qp = Probabilities(q);
  absl::StatusOr<double> auc = Auc(q, y);
  if (SameOutcome(f->grid.auc, auc, what + " AUC")) {
    ExpectClose(f->grid.auc->auc, *auc, what + " AUC");
  }
  absl::StatusOr<CalibrationFit> fit = CalibrationInterceptSlope(q, y);
  if (SameOutcome(f->grid.calibration, fit, what + " calibration")) {
    ExpectClose(f->grid.calibration->intercept, fit->intercept,
                what + " intercept");
    ExpectClose(f->grid.calibration->slope, fit->slope, what + " slope");
  }
  const ReliabilityTable expected = GridEqualCountReference(p, qp, y, 10);
  ASSERT_TRUE(f->grid.equal_count.ok()) << f->grid.equal_count.status();
  ExpectSameTable(*f->grid.equal_count, expected, what + " equal-count");
  absl::StatusOr<HosmerLemeshowResult> hl = HosmerLemeshowFromTable(expected);
  if (SameOutcome(f->grid.hosmer_lemeshow, hl, what + " grid HL")) {
    ExpectClose(f->grid.hosmer_lemeshow->statistic, hl->statistic,
                what + " grid HL");
    ExpectClose(f->grid.hosmer_lemeshow->p_value, hl->p_value,
                what + " grid HL p", 1e-12, 1e-300);
  }
}

class WindowAgreementTest : public ::testing::TestWithParam<int64_t> {};

TEST_P(WindowAgreementTest, OutcomeWindowMatchesPureFunctions) {
  const int64_t n = GetParam();
  const int buckets = static_cast<int>(std::min<int64_t>(n, 10));
  const Stream s = MakeStream(static_cast<size_t>(n + n / 2 + 3), 17);
  absl::StatusOr<OutcomeAccumulator> empty = OutcomeAccumulator::Create({});
  ASSERT_TRUE(empty.ok());
  absl::StatusOr<CountWindow<OutcomeAccumulator>> window =
      CountWindow<OutcomeAccumulator>::Create(n, buckets, *empty);
  ASSERT_TRUE(window.ok()) << window.status();
  for (size_t i = 0; i < s.log_odds.size(); ++i) {
    ASSERT_TRUE(window->Add(s.log_odds[i], s.labels[i]).ok());
  }
  const size_t held = static_cast<size_t>(window->size());
  EXPECT_LE(static_cast<int64_t>(held), n);
  EXPECT_GT(static_cast<int64_t>(held), n - window->bucket_records());
  const OutcomeAccumulator merged = window->Merged();
  CheckOutcomeFigures(merged, s, s.log_odds.size() - held, s.log_odds.size(),
                      absl::StrCat("window of ", n));
}

TEST_P(WindowAgreementTest, ScorePsiWindowMatchesPureFunction) {
  const int64_t n = GetParam();
  const int buckets = static_cast<int>(std::min<int64_t>(n, 10));
  const Stream s = MakeStream(static_cast<size_t>(n + n / 2 + 3), 29);
  std::vector<double> p = Probabilities(s.log_odds);
  for (size_t i = 7; i < p.size(); i += 50) p[i] = std::nan("");  // missing
  auto baseline = std::make_shared<const BinnedBaseline>(
      *BinnedBaseline::Create({0.05, 0.1, 0.2, 0.3, 0.5, 0.7},
                              {0.2, 0.15, 0.2, 0.15, 0.15, 0.1, 0.05}));
  absl::StatusOr<NumericStabilityAccumulator> empty =
      NumericStabilityAccumulator::Create(baseline, ValueRange{0.01, 0.9});
  ASSERT_TRUE(empty.ok());
  auto window =
      CountWindow<NumericStabilityAccumulator>::Create(n, buckets, *empty);
  ASSERT_TRUE(window.ok());
  for (double v : p) ASSERT_TRUE(window->Add(v).ok());
  const size_t held = static_cast<size_t>(window->size());
  absl::StatusOr<StabilityFigures> streamed = window->Merged().Result();
  absl::StatusOr<StabilityFigures> pure = NumericStability(
      *baseline, absl::MakeConstSpan(p).subspan(p.size() - held),
      ValueRange{0.01, 0.9});
  ASSERT_TRUE(streamed.ok() && pure.ok());
  EXPECT_EQ(streamed->count, pure->count);
  EXPECT_EQ(streamed->missing, pure->missing);
  EXPECT_EQ(streamed->out_of_range, pure->out_of_range);
  ASSERT_EQ(streamed->psi.has_value(), pure->psi.has_value());
  if (pure->psi) ExpectClose(*streamed->psi, *pure->psi, "PSI");
  EXPECT_EQ(streamed->missing_rate, pure->missing_rate);
  EXPECT_EQ(streamed->out_of_range_rate, pure->out_of_range_rate);
}

INSTANTIATE_TEST_SUITE_P(Lengths, WindowAgreementTest,
                         ::testing::Values(1, 10, 1000, 1000000));

TEST(AccumulatorTest, MergeOfPartsEqualsWhole) {
  const Stream s = MakeStream(30000, 5);
  absl::StatusOr<OutcomeAccumulator> whole = OutcomeAccumulator::Create({});
  ASSERT_TRUE(whole.ok());
  std::vector<OutcomeAccumulator> parts(3, *whole);
  for (size_t i = 0; i < s.log_odds.size(); ++i) {
    ASSERT_TRUE(parts[i % 3].Add(s.log_odds[i], s.labels[i]).ok());
  }
  for (const OutcomeAccumulator& part : parts) {
    ASSERT_TRUE(whole->Merge(part).ok());
  }
  CheckOutcomeFigures(*whole, s, 0, s.log_odds.size(), "three parts");
}

TEST(AccumulatorTest, CategoricalMatchesPureFunction) {
  auto baseline =
      std::make_shared<const CategoricalBaseline>(*CategoricalBaseline::Create(
          {{"van", 0.6}, {"cargo_bike", 0.3}, {"car", 0.1}}));
  absl::StatusOr<CategoricalStabilityAccumulator> acc =
      CategoricalStabilityAccumulator::Create(baseline);
  ASSERT_TRUE(acc.ok());
  const std::vector<std::optional<absl::string_view>> levels = {
      "van", "van", std::nullopt, "drone", "car", "cargo_bike", "van"};
  for (const auto& level : levels) acc->Add(level);
  absl::StatusOr<StabilityFigures> streamed = acc->Result();
  absl::StatusOr<StabilityFigures> pure =
      CategoricalStability(*baseline, levels);
  ASSERT_TRUE(streamed.ok() && pure.ok());
  EXPECT_EQ(*streamed->psi, *pure->psi);
  EXPECT_EQ(streamed->out_of_range, 1);
  EXPECT_EQ(streamed->missing, 1);
}

TEST(AccumulatorTest, RefusesBadRecordsAndMismatchedMerges) {
  absl::StatusOr<OutcomeAccumulator> acc = OutcomeAccumulator::Create({});
  ASSERT_TRUE(acc.ok());
  EXPECT_THAT(acc->Add(0.5, 2).message(), HasSubstr("label is 2"));
  EXPECT_THAT(acc->Add(std::nan(""), 1).message(),
              HasSubstr("log-odds is nan"));
  EXPECT_EQ(acc->count(), 0);
  EXPECT_EQ(acc->Result().status().code(),
            absl::StatusCode::kFailedPrecondition);

  OutcomeOptions other_options;
  other_options.grid_cells = 1024;
  absl::StatusOr<OutcomeAccumulator> other =
      OutcomeAccumulator::Create(other_options);
  ASSERT_TRUE(other.ok());
  EXPECT_EQ(acc->Merge(*other).code(), absl::StatusCode::kInvalidArgument);

  OutcomeOptions bad;
  bad.hosmer_lemeshow_groups = 2;
  EXPECT_THAT(OutcomeAccumulator::Create(bad).status().message(),
              HasSubstr("Hosmer-Lemeshow groups is 2"));
}

TEST(AccumulatorTest, OneClassWindowKeepsTheFiguresThatExist) {
  absl::StatusOr<OutcomeAccumulator> acc = OutcomeAccumulator::Create({});
  ASSERT_TRUE(acc.ok());
  for (double z : {-2.0, -1.0, 0.5, 1.5}) ASSERT_TRUE(acc->Add(z, 0).ok());
  absl::StatusOr<OutcomeFigures> f = acc->Result();
  ASSERT_TRUE(f.ok());
  EXPECT_GT(f->loss.log_loss, 0);
  EXPECT_EQ(f->grid.auc.status().code(), absl::StatusCode::kFailedPrecondition);
  EXPECT_THAT(f->grid.auc.status().message(), HasSubstr("undefined"));
  EXPECT_EQ(f->grid.calibration.status().code(),
            absl::StatusCode::kFailedPrecondition);
}

}  // namespace
}  // namespace plumbline::monitor
