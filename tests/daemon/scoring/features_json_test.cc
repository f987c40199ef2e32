// File: tests/daemon/scoring/features_json_test.cc
//
// The ledger's stored feature JSON read back into RawValue rows (for the
// monitor's rebuild) and written from rows.
#include "daemon/scoring/features_json.h"

#include "gmock/gmock.h"
#include "gtest/gtest.h"
#include "tests/testing/health_test_sets.h"

namespace plumbline::daemon {
namespace {

using scorer::RawValue;
using ::testing::HasSubstr;
using Kind = scorer::RawValue::Kind;

class FeaturesJsonTest : public ::testing::Test {
 protected:
  void SetUp() override {
    plan_ = testing::CompilePlan(testing::BaselineSetJson("courier", "v1"));
    ASSERT_NE(plan_, nullptr);
  }
  absl::Status Parse(const std::string& json) {
    return ParseFeaturesJson(*plan_, json, &holder_, &row_);
  }
  std::shared_ptr<const scorer::ScoringPlan> plan_;
  google::protobuf::Struct holder_;
  std::vector<RawValue> row_;
};

TEST_F(FeaturesJsonTest, ParsesNumbersTextAndMissing) {
  ASSERT_TRUE(
      Parse(R"({"region": "rural", "distance_km": 4.25, "hour": null})").ok());
  ASSERT_EQ(row_.size(), 3u);
  EXPECT_EQ(row_[0].kind, Kind::kNumber);
  EXPECT_EQ(row_[0].number, 4.25);
  EXPECT_EQ(row_[1].kind, Kind::kText);
  EXPECT_EQ(row_[1].text, "rural");
  EXPECT_EQ(row_[2].kind, Kind::kMissing);
}

TEST_F(FeaturesJsonTest, LevelIndexBecomesTheLevel) {
  ASSERT_TRUE(Parse(R"({"region": 0})").ok());
  EXPECT_EQ(row_[1].kind, Kind::kText);
  EXPECT_EQ(row_[1].text, "urban");
  EXPECT_EQ(row_[0].kind, Kind::kMissing);
}

TEST_F(FeaturesJsonTest, RefusesWhatIsNotARecordOfThePlan) {
  struct Case {
    const char* json;
    const char* message;
  } cases[] = {
      {"[1, 2]", "not a JSON object"},
      {"{\"distance_km\": ", "not a JSON object"},
      {R"({"speed": 3})", "feature 'speed' is not a feature of set 'courier'"},
      {R"({"distance_km": true})",
       "feature 'distance_km': expected a number or a string"},
      {R"({"distance_km": "far"})",
       "feature 'distance_km': expected a number, got text 'far'"},
      {R"({"region": 2})",
       "feature 'region': the number 2 is not a level index in [0, 2)"},
      {R"({"region": 0.5})", "not a level index"},
  };
  for (const Case& c : cases) {
    absl::Status s = Parse(c.json);
    EXPECT_EQ(s.code(), absl::StatusCode::kInvalidArgument) << c.json;
    EXPECT_THAT(s.message(), HasSubstr(c.message)) << c.json;
  }
}

TEST_F(FeaturesJsonTest, ReadsWhatTheLedgerWrites) {
  const std::vector<RawValue> row = {RawValue::Number(0.1 + 0.2),
                                     RawValue::Text("ru\"ral"),
                                     RawValue::Missing()};
  const std::vector<uint8_t> sent = {1, 1, 1};
  const std::string json = FeaturesJson(*plan_, row, sent);
  ASSERT_TRUE(Parse(json).ok()) << json;
  EXPECT_EQ(row_[0].number, 0.1 + 0.2);  // the double round-trips exactly
  EXPECT_EQ(row_[1].text, "ru\"ral");
  EXPECT_EQ(row_[2].kind, Kind::kMissing);
}

}  // namespace
}  // namespace plumbline::daemon
