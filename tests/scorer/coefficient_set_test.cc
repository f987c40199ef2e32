#include "scorer/coefficient_set.h"

#include <unistd.h>

#include <cctype>
#include <cmath>
#include <cstdio>
#include <functional>
#include <limits>
#include <string>

#include "gmock/gmock.h"
#include "gtest/gtest.h"
#include "tests/scorer/test_sets.h"

namespace plumbline::scorer {
namespace {

using ::testing::HasSubstr;

v1::CoefficientSet ValidSet() {
  auto set = ParseCoefficientSet(testing::kAllTransformsSetJson, "test");
  EXPECT_TRUE(set.ok()) << set.status();
  return *set;
}

TEST(CoefficientSetTest, ParsesAValidSet) {
  v1::CoefficientSet set = ValidSet();
  EXPECT_EQ(set.name(), "courier_test");
  EXPECT_EQ(set.features_size(), 5);
  EXPECT_EQ(set.features(2).missing().kind(), v1::MissingRule::IMPUTE);
}

TEST(CoefficientSetTest, RejectsUnknownFieldsAndNamesTheSource) {
  auto set = ParseCoefficientSet(
      R"({"name": "a", "version": "1", "colour": 3})", "sets/a.json");
  ASSERT_FALSE(set.ok());
  EXPECT_EQ(set.status().code(), absl::StatusCode::kInvalidArgument);
  EXPECT_THAT(set.status().message(), HasSubstr("sets/a.json"));
  EXPECT_THAT(set.status().message(), HasSubstr("colour"));
}

TEST(CoefficientSetTest, RejectsMalformedJson) {
  auto set = ParseCoefficientSet("{\"name\": ", "sets/b.json");
  ASSERT_FALSE(set.ok());
  EXPECT_THAT(set.status().message(), HasSubstr("sets/b.json"));
}

TEST(CoefficientSetTest, MissingFileIsNotFound) {
  auto set = ReadCoefficientSetFile("/nonexistent/plumbline/set.json");
  ASSERT_FALSE(set.ok());
  EXPECT_EQ(set.status().code(), absl::StatusCode::kNotFound);
  EXPECT_THAT(set.status().message(),
              HasSubstr("/nonexistent/plumbline/set.json"));
}

TEST(CoefficientSetTest, ReadsAFileAndRoundTripsExactly) {
  v1::CoefficientSet set = ValidSet();
  set.mutable_features(0)->mutable_numeric()->set_coefficient(0.1 + 0.2);
  set.set_intercept(-1.0 / 3.0);
  auto json = CoefficientSetToJson(set);
  ASSERT_TRUE(json.ok());
  // Its own name: other checkouts may run this test at the same time.
  const std::string path = ::testing::TempDir() + "/roundtrip_set_" +
                           std::to_string(getpid()) + ".json";
  {
    FILE* f = std::fopen(path.c_str(), "w");
    ASSERT_NE(f, nullptr);
    std::fputs(json->c_str(), f);
    std::fclose(f);
  }
  auto back = ReadCoefficientSetFile(path);
  ASSERT_TRUE(back.ok()) << back.status();
  EXPECT_EQ(back->features(0).numeric().coefficient(), 0.1 + 0.2);
  EXPECT_EQ(back->intercept(), -1.0 / 3.0);
  EXPECT_EQ(back->SerializeAsString(), set.SerializeAsString());
}

// From tests/fuzz/fuzz_coefficient_set (crash-8cfa95a7...): a level
// coefficient written "-0." read, written ("-0") and read again came back
// +0.0, so the set did not equal itself after a round trip. Negative zeros
// are read as +0.0 (both score the same), in nested messages too.
TEST(CoefficientSetTest, ANegativeZeroReadsBackEqual) {
  constexpr char kJson[] = R"({"name": "courier", "version": "v1",
    "intercept": -0.0,
    "features": [{"name": "service",
      "categorical": {"levels": [{"value": "standard", "coefficient": 0},
                                 {"value": "express", "coefficient": -0.}]}},
      {"name": "hour", "binned": {"edges": [9, 12],
                                  "coefficients": [-0.0, 0.5, 0.2]}}]})";
  auto set = ParseCoefficientSet(kJson, "neg0.json");
  ASSERT_TRUE(set.ok()) << set.status();
  EXPECT_FALSE(std::signbit(set->intercept()));
  EXPECT_FALSE(
      std::signbit(set->features(0).categorical().levels(1).coefficient()));
  EXPECT_FALSE(std::signbit(set->features(1).binned().coefficients(0)));
  auto json = CoefficientSetToJson(*set);
  ASSERT_TRUE(json.ok());
  auto back = ParseCoefficientSet(*json, "written.json");
  ASSERT_TRUE(back.ok()) << back.status();
  EXPECT_EQ(back->SerializeAsString(), set->SerializeAsString());
}

TEST(ShownTextTest, CutsAndEscapes) {
  EXPECT_EQ(ShownText("rural"), "rural");
  EXPECT_EQ(ShownText("a\nb\\"), "a\\x0ab\\x5c");
  EXPECT_EQ(ShownText(std::string(100, 'z')),
            std::string(64, 'z') + "...(100 bytes)");
  EXPECT_EQ(ShownText("\xc3\xa9"), "\\xc3\\xa9");
}

TEST(CoefficientSetTest, LongestVersionIsAccepted) {
  v1::CoefficientSet set = ValidSet();
  set.set_version(std::string(kMaxVersionBytes, 'v'));
  EXPECT_TRUE(ValidateCoefficientSet(set, "x").ok());
}

struct ValidationCase {
  const char* what;
  std::function<void(v1::CoefficientSet&)> mutate;
  const char* expected;  // substring of the error: field path and reason
};

void PrintTo(const ValidationCase& c, std::ostream* os) { *os << c.what; }

class ValidationTest : public ::testing::TestWithParam<ValidationCase> {};

TEST_P(ValidationTest, NamesTheFieldAndTheProblem) {
  v1::CoefficientSet set = ValidSet();
  GetParam().mutate(set);
  absl::Status st = ValidateCoefficientSet(set, "sets/x.json");
  ASSERT_FALSE(st.ok()) << GetParam().what;
  EXPECT_EQ(st.code(), absl::StatusCode::kInvalidArgument);
  EXPECT_THAT(st.message(), HasSubstr("sets/x.json: "));
  EXPECT_THAT(st.message(), HasSubstr(GetParam().expected));
}

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
constexpr double kInf = std::numeric_limits<double>::infinity();

v1::NumericTransform* Num(v1::CoefficientSet& s, int i) {
  return s.mutable_features(i)->mutable_numeric();
}
v1::CategoricalTransform* Cat(v1::CoefficientSet& s) {
  return s.mutable_features(2)->mutable_categorical();
}
v1::BinnedTransform* Bin(v1::CoefficientSet& s) {
  return s.mutable_features(3)->mutable_binned();
}

INSTANTIATE_TEST_SUITE_P(
    Table, ValidationTest,
    ::testing::Values(
        ValidationCase{"empty name", [](auto& s) { s.set_name(""); },
                       "name: must be"},
        ValidationCase{"bad name", [](auto& s) { s.set_name("a b"); },
                       "name: must be"},
        ValidationCase{"no version", [](auto& s) { s.set_version(""); },
                       "version: must not be empty"},
        ValidationCase{
            "version with a newline",
            [](auto& s) { s.set_version("v2\nlevel=error"); },
            "version: \"v2\\x0alevel=error\" holds the control character "
            "0x0a at byte 2"},
        ValidationCase{"version with an escape",
                       [](auto& s) { s.set_version("\x1b[2J"); },
                       "version: \"\\x1b[2J\" holds the control character"},
        ValidationCase{"very long version",
                       [](auto& s) { s.set_version(std::string(129, 'v')); },
                       "...(129 bytes)\" is longer than 128 bytes"},
        ValidationCase{
            "feature name with a tab",
            [](auto& s) { s.mutable_features(1)->set_name("parcel\tkg"); },
            "features[1].name: \"parcel\\x09kg\" holds the control"},
        ValidationCase{"NaN intercept", [](auto& s) { s.set_intercept(kNaN); },
                       "intercept: must be a finite number"},
        ValidationCase{
            "duplicate feature",
            [](auto& s) { s.mutable_features(1)->set_name("distance_km"); },
            "features[1].name: feature \"distance_km\" is defined twice"},
        ValidationCase{"empty feature name",
                       [](auto& s) { s.mutable_features(1)->set_name(""); },
                       "features[1].name: must not be empty"},
        ValidationCase{
            "reserved name",
            [](auto& s) { s.mutable_features(1)->set_name("record_id"); },
            "features[1].name: \"record_id\" is reserved"},
        ValidationCase{
            "no transform",
            [](auto& s) { s.mutable_features(4)->clear_transform(); },
            "features[4]: needs one transform"},
        ValidationCase{"zero scale", [](auto& s) { Num(s, 0)->set_scale(0); },
                       "features[0].numeric.scale: must be > 0, got 0"},
        ValidationCase{"negative scale",
                       [](auto& s) { Num(s, 0)->set_scale(-2); },
                       "features[0].numeric.scale: must be > 0"},
        ValidationCase{"inf centre",
                       [](auto& s) { Num(s, 0)->set_center(kInf); },
                       "features[0].numeric.center: must be a finite number"},
        ValidationCase{
            "NaN coefficient",
            [](auto& s) { Num(s, 4)->set_coefficient(kNaN); },
            "features[4].numeric.coefficient: must be a finite number"},
        ValidationCase{"clip bounds reversed",
                       [](auto& s) { Num(s, 0)->set_clip_high(-1); },
                       "features[0].numeric.clip_high: must be >= clip_low"},
        ValidationCase{
            "no levels", [](auto& s) { Cat(s)->clear_levels(); },
            "features[2].categorical.levels: must list at least one level"},
        ValidationCase{
            "empty level",
            [](auto& s) { Cat(s)->mutable_levels(1)->set_value(""); },
            "features[2].categorical.levels[1].value: must not be empty"},
        ValidationCase{
            "duplicate level",
            [](auto& s) { Cat(s)->mutable_levels(2)->set_value("flat"); },
            "features[2].categorical.levels[2].value: level \"flat\" is listed "
            "twice"},
        ValidationCase{
            "unknown reference level",
            [](auto& s) { Cat(s)->set_reference_level("barn"); },
            "features[2].categorical.reference_level: \"barn\" is not"},
        ValidationCase{
            "impute level not a level",
            [](auto& s) {
              s.mutable_features(2)->mutable_missing()->set_impute_level(
                  "barn");
            },
            "features[2].missing.impute_level: \"barn\" is not"},
        ValidationCase{
            "unsorted edges", [](auto& s) { Bin(s)->set_edges(1, 8); },
            "features[3].binned.edges[1]: edges must be strictly increasing"},
        ValidationCase{"equal edges", [](auto& s) { Bin(s)->set_edges(1, 9); },
                       "features[3].binned.edges[1]"},
        ValidationCase{"no edges",
                       [](auto& s) {
                         Bin(s)->clear_edges();
                         Bin(s)->clear_coefficients();
                         Bin(s)->add_coefficients(1);
                       },
                       "features[3].binned.edges: must list at least one edge"},
        ValidationCase{
            "too few bin coefficients",
            [](auto& s) { Bin(s)->mutable_coefficients()->RemoveLast(); },
            "features[3].binned.coefficients: needs 3 values"},
        ValidationCase{
            "NaN impute number",
            [](auto& s) {
              s.mutable_features(0)->mutable_missing()->set_impute_number(kNaN);
            },
            "features[0].missing.impute_number: must be a finite number"},
        ValidationCase{"inf indicator",
                       [](auto& s) {
                         s.mutable_features(1)
                             ->mutable_missing()
                             ->set_indicator_coefficient(kInf);
                       },
                       "features[1].missing.indicator_coefficient"},
        ValidationCase{"baseline proportions count",
                       [](auto& s) {
                         auto* b = s.mutable_features(0)->mutable_baseline();
                         b->add_edges(1);
                         b->add_proportions(1);
                       },
                       "features[0].baseline.proportions: needs 2 values"},
        ValidationCase{"baseline proportions sum",
                       [](auto& s) {
                         auto* b = s.mutable_features(0)->mutable_baseline();
                         b->add_edges(1);
                         b->add_proportions(0.5);
                         b->add_proportions(0.6);
                       },
                       "features[0].baseline.proportions: must sum to 1"},
        ValidationCase{"baseline level share out of range",
                       [](auto& s) {
                         (*s.mutable_features(2)
                               ->mutable_baseline()
                               ->mutable_level_proportions())["flat"] = 1.5;
                       },
                       "features[2].baseline.level_proportions[\"flat\"]: must "
                       "be in [0, 1]"},
        ValidationCase{"baseline max below min",
                       [](auto& s) {
                         auto* b = s.mutable_features(0)->mutable_baseline();
                         b->set_min(3);
                         b->set_max(1);
                       },
                       "features[0].baseline.max: must be >= min"},
        ValidationCase{"score baseline unsorted",
                       [](auto& s) {
                         auto* b = s.mutable_score_baseline();
                         b->add_edges(0.5);
                         b->add_edges(0.2);
                         b->add_proportions(0.3);
                         b->add_proportions(0.3);
                         b->add_proportions(0.4);
                       },
                       "score_baseline.edges[1]"}),
    [](const ::testing::TestParamInfo<ValidationCase>& info) {
      // "NaN intercept" -> "NaNIntercept": readable ctest names.
      std::string name;
      bool upper = true;
      for (const char* p = info.param.what; *p != '\0'; ++p) {
        if (std::isalnum(static_cast<unsigned char>(*p))) {
          name += upper ? static_cast<char>(
                              std::toupper(static_cast<unsigned char>(*p)))
                        : *p;
          upper = false;
        } else {
          upper = true;
        }
      }
      return name;
    });

}  // namespace
}  // namespace plumbline::scorer
