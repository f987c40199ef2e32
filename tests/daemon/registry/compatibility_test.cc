// File: tests/daemon/registry/compatibility_test.cc
//
// SchemaChanges: every difference that would make a call valid today fail
// or change meaning is named; coefficient changes are not differences.
#include "daemon/registry/compatibility.h"

#include <string>
#include <vector>

#include "gmock/gmock.h"
#include "gtest/gtest.h"
#include "scorer/coefficient_set.h"
#include "tests/testing/status_matchers.h"
#include "tests/testing/test_sets.h"

namespace plumbline::daemon {
namespace {

using ::testing::ElementsAre;
using ::testing::HasSubstr;
using ::testing::IsEmpty;

v1::CoefficientSet Courier() {
  return *scorer::ParseCoefficientSet(
      testing::CourierSetJson("courier", "v1", -1.5), "test");
}

v1::Feature* Find(v1::CoefficientSet& set, const std::string& name) {
  for (v1::Feature& f : *set.mutable_features()) {
    if (f.name() == name) return &f;
  }
  return nullptr;
}

TEST(SchemaChangesTest, NewCoefficientsAndCentresAreNoChange) {
  v1::CoefficientSet to = Courier();
  to.set_intercept(0.25);
  Find(to, "distance_km")->mutable_numeric()->set_coefficient(2.0);
  Find(to, "distance_km")->mutable_numeric()->set_center(7.0);
  EXPECT_THAT(SchemaChanges(Courier(), to), IsEmpty());
}

TEST(SchemaChangesTest, AFeatureGoneOrChangingKindIsNamed) {
  v1::CoefficientSet to = Courier();
  to.mutable_features()->erase(to.mutable_features()->begin());  // distance_km
  std::vector<std::string> changes = SchemaChanges(Courier(), to);
  ASSERT_FALSE(changes.empty());
  EXPECT_THAT(changes[0], HasSubstr("feature 'distance_km' is gone"));

  v1::CoefficientSet kind = Courier();
  v1::Feature* hour = Find(kind, "hour");
  ASSERT_NE(hour, nullptr);
  hour->mutable_numeric()->set_scale(1);
  EXPECT_THAT(SchemaChanges(Courier(), kind),
              ElementsAre(HasSubstr("'hour' changes from binned to numeric")));
}

TEST(SchemaChangesTest, StricterMissingAndUnseenRulesAreNamed) {
  v1::CoefficientSet to = Courier();
  // parcel_kg is IMPUTE in the test set; service takes unseen levels as
  // missing.
  Find(to, "parcel_kg")->mutable_missing()->set_kind(v1::MissingRule::REJECT);
  Find(to, "service")
      ->mutable_categorical()
      ->set_unseen(v1::CategoricalTransform::UNSEEN_REJECT);
  std::vector<std::string> changes = SchemaChanges(Courier(), to);
  EXPECT_THAT(changes,
              ::testing::Contains(HasSubstr("'parcel_kg' becomes required")));
  EXPECT_THAT(changes, ::testing::Contains(
                           HasSubstr("refuses unseen levels it accepted")));
}

TEST(SchemaChangesTest, LevelsMayOnlyBeAppended) {
  v1::CoefficientSet appended = Courier();
  Find(appended, "region")
      ->mutable_categorical()
      ->add_levels()
      ->set_value("island");
  EXPECT_THAT(SchemaChanges(Courier(), appended), IsEmpty());

  v1::CoefficientSet moved = Courier();
  auto* levels = Find(moved, "region")->mutable_categorical()->mutable_levels();
  ASSERT_GE(levels->size(), 2);
  levels->SwapElements(0, 1);
  EXPECT_THAT(SchemaChanges(Courier(), moved),
              ElementsAre(HasSubstr("dense codes would change meaning")));

  v1::CoefficientSet lost = Courier();
  Find(lost, "region")->mutable_categorical()->mutable_levels()->RemoveLast();
  EXPECT_THAT(SchemaChanges(Courier(), lost),
              ElementsAre(HasSubstr("'region' loses level")));
}

TEST(SchemaChangesTest, ANewRequiredFeatureOrAnotherOrderIsNamed) {
  v1::CoefficientSet to = Courier();
  v1::Feature* extra = to.add_features();
  extra->set_name("floor");
  extra->mutable_numeric()->set_scale(1);
  std::vector<std::string> changes = SchemaChanges(Courier(), to);
  EXPECT_THAT(changes, ::testing::Contains(
                           HasSubstr("new feature 'floor' is required")));
  EXPECT_THAT(changes, ::testing::Contains(HasSubstr(
                           "dense batches without `columns` would fail")));
}

TEST(SchemaChangesTest, TheRefusalListsEveryChangeAndHowToAllowIt) {
  EXPECT_OK(SchemaChangeRefused("activate x", {}));
  EXPECT_THAT(SchemaChangeRefused("activate version 'v2' of set 'courier'",
                                  {"feature 'a' is gone", "b"}),
              plumbline::testing::StatusIs(
                  absl::StatusCode::kFailedPrecondition,
                  ::testing::AllOf(HasSubstr("feature 'a' is gone; b"),
                                   HasSubstr("--allow_schema_change"))));
}

}  // namespace
}  // namespace plumbline::daemon
