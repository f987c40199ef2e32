// File: tests/daemon/scoring/packed_row_test.cc
//
// The ledger's packed rows (daemon/scoring/packed_row.h): every value reads
// back bit for bit, the JSON view of a packed row is exactly the JSON the
// ledger stored before (FeaturesJson, itself checked against protobuf's JSON
// parser in features_json_text_test.cc), rows read into another version's
// order by name, the size goal of 30 numeric features in at most 100 bytes
// holds for values of up to six significant digits, and damaged rows are
// refused with INVALID_ARGUMENT, never read past their end.
#include "daemon/scoring/packed_row.h"

#include <cmath>
#include <cstring>
#include <limits>
#include <random>
#include <string>
#include <vector>

#include "absl/strings/str_cat.h"
#include "daemon/scoring/features_json.h"
#include "gmock/gmock.h"
#include "gtest/gtest.h"
#include "tests/testing/status_matchers.h"
#include "tests/testing/test_sets.h"

namespace plumbline::daemon {
namespace {

using scorer::RawValue;
using ::testing::HasSubstr;

uint64_t Bits(double x) {
  uint64_t b;
  std::memcpy(&b, &x, 8);
  return b;
}

// A set of `n` numeric features f0..f{n-1} (coefficient 0.1, IMPUTE 0).
std::shared_ptr<const scorer::ScoringPlan> WidePlan(int n) {
  v1::CoefficientSet set;
  set.set_name("parcel_wide");
  set.set_version("w1");
  for (int i = 0; i < n; ++i) {
    v1::Feature* f = set.add_features();
    f->set_name(absl::StrCat("f", i));
    f->mutable_numeric()->set_scale(1);
    f->mutable_numeric()->set_coefficient(0.1);
    f->mutable_missing()->set_kind(v1::MissingRule::IMPUTE);
  }
  auto plan = scorer::ScoringPlan::Compile(set, "test");
  EXPECT_TRUE(plan.ok()) << plan.status();
  return plan.ok() ? *plan : nullptr;
}

// Packs `x` as the first feature of the courier set and reads it back.
double RoundTrip(double x, std::string* packed = nullptr) {
  auto plan = testing::CourierPlan();
  const std::vector<RawValue> values = {RawValue::Number(x), RawValue(),
                                        RawValue(), RawValue(), RawValue()};
  std::string bytes;
  PackFeatures(*plan, values, std::vector<uint8_t>{1, 0, 0, 0, 0}, &bytes);
  std::vector<PackedValue> back;
  const absl::Status s = UnpackFeatures(LayoutOf(*plan), bytes, &back);
  EXPECT_TRUE(s.ok()) << s;
  if (packed != nullptr) *packed = bytes;
  return s.ok() ? back[0].value.number : std::nan("");
}

TEST(PackedRowTest, EveryNumberReadsBackBitForBit) {
  const double cases[] = {0,
                          -0.0,  // kept as -0 (the double form)
                          1,
                          -1,
                          4.2,
                          0.1,
                          12.345,
                          -7.25,
                          123456.789012,
                          1.0 / 3.0,
                          1e-300,
                          5e-324,  // smallest subnormal
                          std::numeric_limits<double>::max(),
                          std::numeric_limits<double>::lowest(),
                          9007199254740992.0,
                          9007199254740993.0,
                          -123456789.123456789,
                          0.5f,
                          std::numeric_limits<double>::infinity()};
  for (double x : cases) {
    EXPECT_EQ(Bits(RoundTrip(x)), Bits(x)) << x;
  }
  // Random doubles over many magnitudes, and short decimals as a caller's
  // text gives them (strtod of "m e-k").
  std::mt19937_64 rng(20261203);
  std::uniform_int_distribution<uint64_t> any_bits;
  std::uniform_int_distribution<int64_t> mantissa(-9999999, 9999999);
  std::uniform_int_distribution<int> digits(0, 8);
  for (int i = 0; i < 20000; ++i) {
    uint64_t b = any_bits(rng);
    double x;
    std::memcpy(&x, &b, 8);
    if (std::isnan(x)) continue;  // never scored: NaN is refused
    ASSERT_EQ(Bits(RoundTrip(x)), Bits(x)) << x;
    const std::string text = absl::StrCat(mantissa(rng), "e-", digits(rng));
    const double decimal = std::strtod(text.c_str(), nullptr);
    ASSERT_EQ(Bits(RoundTrip(decimal)), Bits(decimal)) << text;
  }
}

TEST(PackedRowTest, ShortDecimalsTakeOneToThreeBytes) {
  std::string packed;
  RoundTrip(4.2, &packed);  // marker, 3 tag bytes, one varint byte
  EXPECT_EQ(packed.size(), 1u + 3u + 1u);
  RoundTrip(12.345, &packed);  // m = 12345, zigzag 24690: 3 varint bytes
  EXPECT_EQ(packed.size(), 1u + 3u + 3u);
  RoundTrip(1.0 / 3.0, &packed);  // no short form: the 8-byte double
  EXPECT_EQ(packed.size(), 1u + 3u + 8u);
}

// The issue's goal: <= 100 bytes a row at 30 numeric features, before
// SQLite's own overhead. Values as couriers' records have them: distances
// to 0.1 km, weights to 0.01 kg, counts, hours, shares to 4 digits.
TEST(PackedRowTest, ThirtyNumericFeaturesFitInAHundredBytes) {
  auto plan = WidePlan(30);
  ASSERT_NE(plan, nullptr);
  std::mt19937_64 rng(7);
  std::uniform_int_distribution<int> small(0, 999);
  size_t worst = 0, json_bytes = 0;
  for (int r = 0; r < 1000; ++r) {
    std::vector<RawValue> values;
    for (int f = 0; f < 30; ++f) {
      const int kind = f % 5;
      const double v = kind == 0   ? small(rng) / 10.0    // 12.3 km
                       : kind == 1 ? small(rng) / 100.0   // 4.56 kg
                       : kind == 2 ? small(rng) % 24      // hour
                       : kind == 3 ? small(rng) / 1000.0  // 0.123 share
                                   : small(rng) * 1.0;    // count
      values.push_back(RawValue::Number(v));
    }
    const std::vector<uint8_t> sent(30, 1);
    std::string packed;
    PackFeatures(*plan, values, sent, &packed);
    worst = std::max(worst, packed.size());
    json_bytes = std::max(json_bytes, FeaturesJson(*plan, values, sent).size());
  }
  EXPECT_LE(worst, 100u) << "JSON: " << json_bytes;
  EXPECT_LT(worst * 3, json_bytes);  // the JSON it replaces is > 3x larger
}

TEST(PackedRowTest, JsonViewIsTheJsonTheLedgerStoredBefore) {
  auto plan = testing::CourierPlan();
  // distance_km, parcel_kg, region, service, hour
  const std::vector<std::vector<RawValue>> rows = {
      {RawValue::Number(9), RawValue(), RawValue::Text("rural"), RawValue(),
       RawValue::Number(17.5)},
      {RawValue::Number(-0.0), RawValue::Number(1.0 / 3.0),
       RawValue::Text("a level the set does not know \"quoted\"\n"),
       RawValue::Text("express"), RawValue::Number(1e300)}};
  const std::vector<std::vector<uint8_t>> sents = {
      {1, 0, 1, 1, 1}, {1, 1, 1, 1, 1}, {0, 0, 0, 0, 0}};
  const v1::RowLayout layout = LayoutOf(*plan);
  for (const auto& values : rows) {
    for (const auto& sent : sents) {
      std::string packed;
      PackFeatures(*plan, values, sent, &packed);
      ASSERT_OK_AND_ASSIGN(std::string json,
                           StoredFeaturesJson(&layout, packed));
      EXPECT_EQ(json, FeaturesJson(*plan, values, sent));
    }
  }
  // A JSON row (schema < 7) is returned as it is.
  ASSERT_OK_AND_ASSIGN(std::string json,
                       StoredFeaturesJson(nullptr, R"({"hour":3})"));
  EXPECT_EQ(json, R"({"hour":3})");
  EXPECT_THAT(
      StoredFeaturesJson(nullptr, "\x01\x00"),
      ::plumbline::testing::StatusIs(absl::StatusCode::kInvalidArgument));
}

TEST(PackedRowTest, ReadsIntoAnotherVersionsOrderByName) {
  auto v1_plan = testing::CourierPlan("courier", "v1");
  const std::vector<RawValue> values = {
      RawValue::Number(9), RawValue::Number(2.5), RawValue::Text("rural"),
      RawValue(), RawValue::Number(17)};
  std::string packed;
  PackFeatures(*v1_plan, values, std::vector<uint8_t>{1, 1, 1, 1, 1}, &packed);
  const v1::RowLayout layout = LayoutOf(*v1_plan);

  // The same version: the values as they were.
  StoredFeatureReader reader;
  std::vector<RawValue> row;
  ASSERT_OK(reader.Read(*v1_plan, &layout, packed, &row));
  ASSERT_EQ(row.size(), 5u);
  EXPECT_EQ(row[0].number, 9);
  EXPECT_EQ(row[2].text, "rural");
  EXPECT_EQ(row[3].kind, RawValue::Kind::kMissing);

  // A version with the features in reverse order.
  v1::CoefficientSet reversed = v1_plan->set();
  reversed.set_version("v2");
  reversed.mutable_features()->Clear();
  for (int f = v1_plan->set().features_size() - 1; f >= 0; --f) {
    *reversed.add_features() = v1_plan->set().features(f);
  }
  ASSERT_OK_AND_ASSIGN(auto v2_plan,
                       scorer::ScoringPlan::Compile(reversed, "test"));
  ASSERT_OK(reader.Read(*v2_plan, &layout, packed, &row));
  EXPECT_EQ(row[4].number, 9);      // distance_km is last in v2
  EXPECT_EQ(row[3].number, 2.5);    // parcel_kg
  EXPECT_EQ(row[2].text, "rural");  // region
  EXPECT_EQ(row[0].number, 17);     // hour

  // A version without one of the row's features cannot read it.
  v1::CoefficientSet fewer = v1_plan->set();
  fewer.set_version("v3");
  fewer.mutable_features()->RemoveLast();  // no hour
  ASSERT_OK_AND_ASSIGN(auto v3_plan,
                       scorer::ScoringPlan::Compile(fewer, "test"));
  EXPECT_THAT(
      reader.Read(*v3_plan, &layout, packed, &row),
      ::plumbline::testing::StatusIs(absl::StatusCode::kInvalidArgument,
                                     HasSubstr("stored feature 'hour'")));
  // A packed row needs its layout.
  EXPECT_THAT(
      reader.Read(*v1_plan, nullptr, packed, &row),
      ::plumbline::testing::StatusIs(absl::StatusCode::kInvalidArgument));
  // A JSON row reads by name as before.
  ASSERT_OK(reader.Read(*v2_plan, nullptr, R"({"distance_km":3})", &row));
  EXPECT_EQ(row[4].number, 3);
}

TEST(PackedRowTest, DamagedRowsAreRefusedNotOverread) {
  auto plan = testing::CourierPlan();
  const v1::RowLayout layout = LayoutOf(*plan);
  const std::vector<RawValue> values = {
      RawValue::Number(1.0 / 3.0), RawValue::Number(4.2),
      RawValue::Text("rural"), RawValue::Text("unknown level"),
      RawValue::Number(17)};
  std::string packed;
  PackFeatures(*plan, values, std::vector<uint8_t>{1, 1, 1, 1, 1}, &packed);
  std::vector<PackedValue> back;
  ASSERT_OK(UnpackFeatures(layout, packed, &back));
  // Every truncation is refused (each copy is its own allocation, so a
  // read past the end would be seen by AddressSanitizer in build-asan).
  for (size_t n = 0; n < packed.size(); ++n) {
    const std::string cut = packed.substr(0, n);
    EXPECT_THAT(
        UnpackFeatures(layout, cut, &back),
        ::plumbline::testing::StatusIs(absl::StatusCode::kInvalidArgument))
        << n;
  }
  EXPECT_THAT(UnpackFeatures(layout, packed + "x", &back),
              ::plumbline::testing::StatusIs(absl::StatusCode::kInvalidArgument,
                                             HasSubstr("past its last value")));
  // A tag that does not exist (15) in the first nibble.
  std::string bad_tag = packed;
  bad_tag[1] = static_cast<char>((bad_tag[1] & 0xf0) | 0x0f);
  EXPECT_THAT(UnpackFeatures(layout, bad_tag, &back),
              ::plumbline::testing::StatusIs(absl::StatusCode::kInvalidArgument,
                                             HasSubstr("unknown tag 15")));
  // A level index past the feature's levels.
  std::string one_level;
  PackFeatures(
      *plan,
      {RawValue(), RawValue(), RawValue::Text("rural"), RawValue(), RawValue()},
      std::vector<uint8_t>{0, 0, 1, 0, 0}, &one_level);
  one_level.back() = 0x7f;
  EXPECT_THAT(UnpackFeatures(layout, one_level, &back),
              ::plumbline::testing::StatusIs(absl::StatusCode::kInvalidArgument,
                                             HasSubstr("level index 127")));
}

}  // namespace
}  // namespace plumbline::daemon
