#include "scorer/design_matrix.h"

#include <cmath>
#include <vector>

#include "gmock/gmock.h"
#include "gtest/gtest.h"

namespace plumbline::scorer {
namespace {

using ::testing::ElementsAre;
using ::testing::HasSubstr;

RawValue N(double v) { return RawValue::Number(v); }
RawValue T(const char* v) { return RawValue::Text(v); }
RawValue M() { return RawValue::Missing(); }

// Eight parcels: distance_km, building, hour, weight_kg. Expected values
// below are worked out by hand from these rows.
std::vector<std::vector<RawValue>> Parcels() {
  return {
      {N(1), T("house"), N(8), N(2)},  {N(2), T("flat"), N(9), M()},
      {N(3), T("flat"), N(10), N(3)},  {N(4), T("house"), N(12), N(5)},
      {N(5), T("office"), N(13), M()}, {N(6), T("flat"), N(17), N(1)},
      {N(7), T("house"), N(18), N(4)}, {N(8), T("flat"), N(20), N(5)},
  };
}

std::vector<FeatureSpec> Specs() {
  return {{.name = "distance_km"},
          {.name = "building", .kind = FeatureKind::kCategorical},
          {.name = "hour", .kind = FeatureKind::kBinned, .bins = 2},
          {.name = "weight_kg", .missing = v1::MissingRule::INDICATOR}};
}

TEST(DesignMatrixTest, LearnsTransformsAndReferenceLevels) {
  absl::StatusOr<DesignLayout> layout = DesignLayout::Learn(Specs(), Parcels());
  ASSERT_TRUE(layout.ok()) << layout.status();
  // flat (4 rows) is the most frequent level, so it is the reference; the
  // two hour bins (< 13 and >= 13) hold 4 rows each, so the lower one is.
  EXPECT_THAT(layout->column_names(),
              ElementsAre("distance_km", "building=house", "building=office",
                          "hour>=13", "weight_kg", "weight_kg:missing"));
  const v1::CoefficientSet& set = layout->skeleton();
  // distance 1..8: mean 4.5, population variance 42 / 8 = 5.25.
  EXPECT_DOUBLE_EQ(set.features(0).numeric().center(), 4.5);
  EXPECT_DOUBLE_EQ(set.features(0).numeric().scale(), std::sqrt(5.25));
  const auto& building = set.features(1).categorical();
  ASSERT_EQ(building.levels_size(), 3);
  EXPECT_EQ(building.levels(0).value(), "flat");  // byte order
  EXPECT_EQ(building.levels(2).value(), "office");
  EXPECT_EQ(building.reference_level(), "flat");
  EXPECT_EQ(set.features(1).missing().impute_level(), "flat");
  EXPECT_EQ(building.unseen(), v1::CategoricalTransform::UNSEEN_AS_MISSING);
  // hour edge: sorted value at position floor(1 * 8 / 2) = 4, i.e. 13.
  EXPECT_THAT(set.features(2).binned().edges(), ElementsAre(13));
  // weight_kg present in 6 rows, mean 20 / 6.
  EXPECT_EQ(set.features(3).missing().kind(), v1::MissingRule::INDICATOR);
  EXPECT_DOUBLE_EQ(set.features(3).missing().impute_number(), 20.0 / 6.0);
}

TEST(DesignMatrixTest, KnownLevelsKeepTheirOrderAndNewOnesFollow) {
  // A refit of a set serving [office, house] (in that order) on data that
  // also holds "flat": the serving order stays, so dense codes 0 and 1 keep
  // their meaning, and the new level comes after them.
  std::vector<FeatureSpec> specs = Specs();
  specs[1].known_levels = {"office", "house", "shed"};  // shed: not in data
  absl::StatusOr<DesignLayout> layout = DesignLayout::Learn(specs, Parcels());
  ASSERT_TRUE(layout.ok()) << layout.status();
  const auto& building = layout->skeleton().features(1).categorical();
  ASSERT_EQ(building.levels_size(), 3);
  EXPECT_EQ(building.levels(0).value(), "office");
  EXPECT_EQ(building.levels(1).value(), "house");
  EXPECT_EQ(building.levels(2).value(), "flat");
  // The reference is still the most frequent level (flat, 4 rows).
  EXPECT_EQ(building.reference_level(), "flat");
  EXPECT_THAT(layout->column_names(),
              ElementsAre("distance_km", "building=office", "building=house",
                          "hour>=13", "weight_kg", "weight_kg:missing"));
}

TEST(DesignMatrixTest, LearnsBaselines) {
  absl::StatusOr<DesignLayout> layout = DesignLayout::Learn(Specs(), Parcels());
  ASSERT_TRUE(layout.ok()) << layout.status();
  const v1::CoefficientSet& set = layout->skeleton();
  // Deciles of 1..8 at positions floor(k * 8 / 10), k = 1..9: 1 (the
  // minimum, dropped), 2, 3, 4, 5, 5 (repeat, dropped), 6, 7, 8.
  const v1::Distribution& d = set.features(0).baseline();
  EXPECT_THAT(d.edges(), ElementsAre(2, 3, 4, 5, 6, 7, 8));
  ASSERT_EQ(d.proportions_size(), 8);
  for (double p : d.proportions()) EXPECT_DOUBLE_EQ(p, 1.0 / 8);
  EXPECT_EQ(d.min(), 1);
  EXPECT_EQ(d.max(), 8);
  EXPECT_EQ(d.count(), 8);
  EXPECT_EQ(d.missing_proportion(), 0);
  const v1::Distribution& b = set.features(1).baseline();
  EXPECT_DOUBLE_EQ(b.level_proportions().at("flat"), 0.5);
  EXPECT_DOUBLE_EQ(b.level_proportions().at("office"), 0.125);
  EXPECT_DOUBLE_EQ(set.features(3).baseline().missing_proportion(), 0.25);
}

TEST(DesignMatrixTest, EncodesLikeTheScoringPlan) {
  absl::StatusOr<DesignLayout> layout = DesignLayout::Learn(Specs(), Parcels());
  ASSERT_TRUE(layout.ok()) << layout.status();
  absl::StatusOr<RowMatrix> x = layout->Encode(Parcels());
  ASSERT_TRUE(x.ok()) << x.status();
  ASSERT_EQ(x->rows(), 8);
  ASSERT_EQ(x->cols(), 6);
  const double sd = std::sqrt(5.25);
  // Row 1: distance 2, flat (reference: zeros), hour 9 (< 13), weight
  // missing (indicator 1, value column 0).
  EXPECT_DOUBLE_EQ((*x)(1, 0), (2 - 4.5) / sd);
  EXPECT_THAT(std::vector<double>(x->row(1).begin() + 1, x->row(1).end()),
              ElementsAre(0, 0, 0, 0, 1));
  // Row 4: distance 5, office, hour 13 (>= 13), weight missing.
  EXPECT_THAT(std::vector<double>(x->row(4).begin() + 1, x->row(4).end()),
              ElementsAre(0, 1, 1, 0, 1));
  // Row 3: house, hour 12 (< 13), weight 5 (above its mean 20 / 6, so
  // positive once standardised), indicator 0.
  EXPECT_EQ((*x)(3, 1), 1);
  EXPECT_EQ((*x)(3, 5), 0);
  EXPECT_GT((*x)(3, 4), 0);
}

TEST(DesignMatrixTest, IndicatorWithoutMissingValuesFallsBackToImpute) {
  auto specs = Specs();
  specs[0].missing = v1::MissingRule::INDICATOR;  // distance is never missing
  absl::StatusOr<DesignLayout> layout = DesignLayout::Learn(specs, Parcels());
  ASSERT_TRUE(layout.ok()) << layout.status();
  EXPECT_EQ(layout->skeleton().features(0).missing().kind(),
            v1::MissingRule::IMPUTE);
  EXPECT_EQ(layout->num_columns(), 6);
}

TEST(DesignMatrixTest, RefusesWhatCannotBeFitted) {
  auto records = Parcels();
  auto specs = Specs();
  auto learn_error = [&](const std::vector<FeatureSpec>& s,
                         const std::vector<std::vector<RawValue>>& r) {
    absl::StatusOr<DesignLayout> layout = DesignLayout::Learn(s, r);
    EXPECT_FALSE(layout.ok());
    return layout.ok() ? absl::OkStatus() : layout.status();
  };
  auto wrong_type = records;
  wrong_type[5][1] = N(3);
  absl::Status st = learn_error(specs, wrong_type);
  EXPECT_EQ(st.code(), absl::StatusCode::kInvalidArgument);
  EXPECT_THAT(st.message(), HasSubstr("records[5]: feature 'building'"));

  auto constant = records;
  for (auto& r : constant) r[0] = N(3);
  st = learn_error(specs, constant);
  EXPECT_EQ(st.code(), absl::StatusCode::kFailedPrecondition);
  EXPECT_THAT(st.message(),
              HasSubstr("feature 'distance_km' cannot be fitted"));

  auto one_level = records;
  for (auto& r : one_level) r[1] = T("flat");
  st = learn_error(specs, one_level);
  EXPECT_THAT(st.message(),
              HasSubstr("every training value is the level \"flat\""));

  auto short_record = records;
  short_record[2].pop_back();
  st = learn_error(specs, short_record);
  EXPECT_THAT(st.message(),
              HasSubstr("records[2] has 3 values for 4 features"));

  auto empty_bin = specs;
  empty_bin[2].edges = {10, 11, 12};  // nothing in [10, 11) ... [11, 12)
  st = learn_error(empty_bin, records);
  EXPECT_THAT(st.message(), HasSubstr("holds no training value"));
}

TEST(DesignMatrixTest, EncodeNamesTheRecord) {
  auto specs = Specs();
  specs[3].missing = v1::MissingRule::REJECT;
  auto complete = Parcels();
  complete[1][3] = N(2);
  complete[4][3] = N(2);
  absl::StatusOr<DesignLayout> layout = DesignLayout::Learn(specs, complete);
  ASSERT_TRUE(layout.ok()) << layout.status();
  absl::StatusOr<RowMatrix> x = layout->Encode(Parcels());
  ASSERT_FALSE(x.ok());
  EXPECT_THAT(x.status().message(),
              HasSubstr("records[1]: feature 'weight_kg'"));
}

TEST(DesignMatrixTest, QuantileDistributionOfTiedValues) {
  // Hand computation: values 1,1,1,1,2,2,3,9 with 4 bins: positions 2, 4, 6
  // hold 1 (the minimum, dropped), 2 and 3: edges [2, 3], shares 4/8, 2/8,
  // 2/8; 2 missing of 10 records.
  const v1::Distribution d =
      QuantileDistribution({3, 1, 2, 1, 9, 1, 2, 1}, 4, 2);
  EXPECT_THAT(d.edges(), ElementsAre(2, 3));
  EXPECT_THAT(d.proportions(), ElementsAre(0.5, 0.25, 0.25));
  EXPECT_EQ(d.count(), 10);
  EXPECT_DOUBLE_EQ(d.missing_proportion(), 0.2);
  EXPECT_EQ(d.min(), 1);
  EXPECT_EQ(d.max(), 9);
}

}  // namespace
}  // namespace plumbline::scorer
