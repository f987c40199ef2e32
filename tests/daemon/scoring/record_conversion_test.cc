// File: tests/daemon/scoring/record_conversion_test.cc
#include "daemon/scoring/record_conversion.h"

#include "gmock/gmock.h"
#include "google/protobuf/util/json_util.h"
#include "gtest/gtest.h"
#include "scorer/coefficient_set.h"
#include "tests/testing/test_sets.h"

namespace plumbline::daemon {
namespace {

using ::testing::HasSubstr;
using Kind = scorer::RawValue::Kind;

google::protobuf::Struct ParseStruct(const std::string& json) {
  google::protobuf::Struct out;
  EXPECT_TRUE(google::protobuf::util::JsonStringToMessage(json, &out).ok())
      << json;
  return out;
}

std::shared_ptr<const scorer::ScoringPlan> CourierPlan() {
  absl::StatusOr<v1::CoefficientSet> set = scorer::ParseCoefficientSet(
      testing::CourierSetJson("courier", "v1"), "courier.json");
  EXPECT_TRUE(set.ok()) << set.status();
  auto plan = scorer::ScoringPlan::Compile(*std::move(set), "courier.json");
  EXPECT_TRUE(plan.ok()) << plan.status();
  return *plan;
}

TEST(ValueToRawValueTest, NumberStringAndNull) {
  google::protobuf::Value number;
  number.set_number_value(4.25);
  absl::StatusOr<scorer::RawValue> raw = ValueToRawValue(number, "x");
  ASSERT_TRUE(raw.ok());
  EXPECT_EQ(raw->kind, Kind::kNumber);
  EXPECT_EQ(raw->number, 4.25);

  google::protobuf::Value text;
  text.set_string_value("rural");
  raw = ValueToRawValue(text, "x");
  ASSERT_TRUE(raw.ok());
  EXPECT_EQ(raw->kind, Kind::kText);
  EXPECT_EQ(raw->text, "rural");

  google::protobuf::Value null;
  null.set_null_value(google::protobuf::NULL_VALUE);
  raw = ValueToRawValue(null, "x");
  ASSERT_TRUE(raw.ok());
  EXPECT_EQ(raw->kind, Kind::kMissing);

  raw = ValueToRawValue(google::protobuf::Value(), "x");  // no kind set
  ASSERT_TRUE(raw.ok());
  EXPECT_EQ(raw->kind, Kind::kMissing);
}

TEST(ValueToRawValueTest, BooleanListAndObjectAreRefusedNamingTheFeature) {
  google::protobuf::Value boolean;
  boolean.set_bool_value(true);
  absl::StatusOr<scorer::RawValue> raw = ValueToRawValue(boolean, "fragile");
  ASSERT_FALSE(raw.ok());
  EXPECT_EQ(raw.status().code(), absl::StatusCode::kInvalidArgument);
  EXPECT_EQ(raw.status().message(),
            "feature 'fragile': expected a number or a string, got a boolean");

  google::protobuf::Value list;
  list.mutable_list_value()->add_values()->set_number_value(1);
  raw = ValueToRawValue(list, "stops");
  ASSERT_FALSE(raw.ok());
  EXPECT_THAT(raw.status().message(), HasSubstr("feature 'stops'"));
  EXPECT_THAT(raw.status().message(), HasSubstr("got a list"));

  google::protobuf::Value object;
  (*object.mutable_struct_value()->mutable_fields())["a"].set_number_value(1);
  raw = ValueToRawValue(object, "address");
  ASSERT_FALSE(raw.ok());
  EXPECT_THAT(raw.status().message(), HasSubstr("got an object"));
}

TEST(StructToRawValuesTest, PlacesValuesInFeatureOrderAndLeavesOthersMissing) {
  auto plan = CourierPlan();
  const google::protobuf::Struct features =
      ParseStruct(R"({"hour": 18, "region": "rural", "parcel_kg": null})");
  std::vector<scorer::RawValue> row;
  ASSERT_TRUE(StructToRawValues(*plan, features, &row).ok());
  ASSERT_EQ(row.size(), 5u);
  EXPECT_EQ(row[0].kind, Kind::kMissing);  // distance_km: absent
  EXPECT_EQ(row[1].kind, Kind::kMissing);  // parcel_kg: null
  EXPECT_EQ(row[2].kind, Kind::kText);     // region
  EXPECT_EQ(row[2].text, "rural");
  EXPECT_EQ(row[3].kind, Kind::kMissing);  // service: absent
  EXPECT_EQ(row[4].kind, Kind::kNumber);   // hour
  EXPECT_EQ(row[4].number, 18.0);
}

TEST(StructToRawValuesTest, UnknownFeatureIsRefusedByName) {
  auto plan = CourierPlan();
  std::vector<scorer::RawValue> row;
  const absl::Status status = StructToRawValues(
      *plan, ParseStruct(R"({"distnce_km": 3, "hour": 8})"), &row);
  EXPECT_EQ(status.code(), absl::StatusCode::kInvalidArgument);
  EXPECT_THAT(status.message(),
              HasSubstr("feature 'distnce_km' is not a feature of set "
                        "'courier'"));
  EXPECT_THAT(status.message(), HasSubstr("distance_km"));  // lists the known
}

TEST(StructToRawValuesTest, WrongTypeIsRefusedByName) {
  auto plan = CourierPlan();
  std::vector<scorer::RawValue> row;
  const absl::Status status =
      StructToRawValues(*plan, ParseStruct(R"({"region": false})"), &row);
  EXPECT_EQ(status.code(), absl::StatusCode::kInvalidArgument);
  EXPECT_EQ(status.message(),
            "feature 'region': expected a number or a string, got a boolean");
}

}  // namespace
}  // namespace plumbline::daemon
