// File: tests/daemon/scoring/features_json_text_test.cc
//
// The stored-features JSON (FeaturesJson, the JSON appenders). The JSON is read
// back with protobuf's JSON parser (JsonStringToMessage into a
// google.protobuf.Struct), an implementation outside this project, which
// must give back exactly the values written: every double bit for bit, every
// string byte for byte.
#include <cmath>
#include <limits>
#include <string>
#include <vector>

#include "absl/container/flat_hash_set.h"
#include "daemon/scoring/features_json.h"
#include "daemon/util/json_text.h"
#include "gmock/gmock.h"
#include "google/protobuf/struct.pb.h"
#include "google/protobuf/util/json_util.h"
#include "gtest/gtest.h"
#include "tests/testing/test_sets.h"

namespace plumbline::daemon {
namespace {

using scorer::RawValue;
using ::testing::MatchesRegex;

google::protobuf::Struct ParseBack(const std::string& json) {
  google::protobuf::Struct out;
  const auto status = google::protobuf::util::JsonStringToMessage(json, &out);
  EXPECT_TRUE(status.ok()) << json << ": " << status.ToString();
  return out;
}

TEST(FeaturesJsonTextTest, WritesSentFeaturesInPlanOrderWithNullForMissing) {
  auto plan = testing::CourierPlan();
  // distance_km, parcel_kg, region, service, hour
  const std::vector<RawValue> values = {
      RawValue::Number(9), RawValue::Missing(), RawValue::Text("rural"),
      RawValue::Missing(), RawValue::Number(17.5)};
  const std::vector<uint8_t> sent = {1, 0, 1, 1, 1};  // parcel_kg not sent
  EXPECT_EQ(FeaturesJson(*plan, values, sent),
            R"({"distance_km":9,"region":"rural","service":null,"hour":17.5})");
  EXPECT_EQ(FeaturesJson(*plan, values, std::vector<uint8_t>(5, 0)), "{}");
}

TEST(FeaturesJsonTextTest, NumbersReadBackToTheSameDouble) {
  auto plan = testing::CourierPlan();
  const double cases[] = {0.1,
                          4.2,
                          -0.0,  // reads back as 0: no score tells them apart
                          1.0 / 3.0,
                          1e-300,
                          5e-324,  // smallest subnormal
                          std::numeric_limits<double>::max(),
                          -123456789.123456789,
                          9007199254740993.0};
  for (double x : cases) {
    const std::vector<RawValue> values = {
        RawValue::Number(x), RawValue::Missing(), RawValue::Missing(),
        RawValue::Missing(), RawValue::Missing()};
    const std::string json =
        FeaturesJson(*plan, values, std::vector<uint8_t>{1, 0, 0, 0, 0});
    const google::protobuf::Struct back = ParseBack(json);
    const double read = back.fields().at("distance_km").number_value();
    EXPECT_EQ(read, x) << json;
  }
  std::string out;
  AppendJsonNumber(4.2, &out);
  EXPECT_EQ(out, "4.2");  // shortest form, no %.17g noise digits
}

TEST(FeaturesJsonTextTest, NonFiniteNumbersBecomeNull) {
  std::string out;
  AppendJsonNumber(std::nan(""), &out);
  out += ",";
  AppendJsonNumber(std::numeric_limits<double>::infinity(), &out);
  EXPECT_EQ(out, "null,null");
}

TEST(FeaturesJsonTextTest, StringsAreEscapedAndReadBackUnchanged) {
  auto plan = testing::CourierPlan();
  const std::string texts[] = {
      "plain", "quote \" and backslash \\", "line\nfeed\r\ttab\b\f",
      // 26 bytes: the literal without its terminating NUL (the embedded
      // one stays). ASan caught the old length, 30, reading past the end.
      std::string("nul \0 and \x1f unit separator", 26),
      "caf\xc3\xa9 \xe2\x82\xac",  // UTF-8: é and the euro sign
      "slash / stays"};
  for (const std::string& text : texts) {
    const std::vector<RawValue> values = {
        RawValue::Missing(), RawValue::Missing(), RawValue::Text(text),
        RawValue::Missing(), RawValue::Missing()};
    const std::string json =
        FeaturesJson(*plan, values, std::vector<uint8_t>{0, 0, 1, 0, 0});
    const google::protobuf::Struct back = ParseBack(json);
    EXPECT_EQ(back.fields().at("region").string_value(), text) << json;
  }
  std::string out;
  AppendJsonString(std::string("a\x01z", 3), &out);
  EXPECT_EQ(out, R"("a\u0001z")");
}

}  // namespace
}  // namespace plumbline::daemon
