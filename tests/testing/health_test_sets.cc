// File: tests/testing/health_test_sets.cc
#include "tests/testing/health_test_sets.h"

#include "absl/strings/str_format.h"
#include "gtest/gtest.h"
#include "scorer/coefficient_set.h"

namespace plumbline::daemon::testing {
namespace {

constexpr char kFeatures[] = R"json(
    {"name": "distance_km",
     "numeric": {"center": 5, "scale": 2.5, "coefficient": 0.8}%s},
    {"name": "region",
     "categorical": {"levels": [{"value": "urban", "coefficient": -0.4},
                                {"value": "rural", "coefficient": 0.9}],
                     "unseen": "UNSEEN_AS_MISSING"},
     "missing": {"kind": "INDICATOR", "indicatorCoefficient": 0.25}%s},
    {"name": "hour",
     "binned": {"edges": [12], "coefficients": [0.1, -0.1]},
     "missing": {"kind": "INDICATOR", "indicatorCoefficient": 0.4}})json";

}  // namespace

std::string BaselineSetJson(absl::string_view name, absl::string_view version) {
  const std::string features = absl::StrFormat(kFeatures,
                                               R"json(,
     "baseline": {"edges": [2, 5], "proportions": [0.3, 0.4, 0.3],
                  "min": 0, "max": 20})json",
                                               R"json(,
     "baseline": {"levelProportions": {"urban": 0.6, "rural": 0.4}})json");
  return absl::StrFormat(R"json({
  "name": "%s", "version": "%s", "intercept": -1,
  "features": [%s],
  "scoreBaseline": {"edges": [0.2, 0.5], "proportions": [0.5, 0.3, 0.2]},
  "provenance": {"trainingLogLoss": 0.5}
})json",
                         name, version, features);
}

std::string BareSetJson(absl::string_view name, absl::string_view version) {
  return absl::StrFormat(R"json({
  "name": "%s", "version": "%s", "intercept": -1,
  "features": [%s]
})json",
                         name, version, absl::StrFormat(kFeatures, "", ""));
}

std::shared_ptr<const scorer::ScoringPlan> CompilePlan(
    const std::string& json) {
  absl::StatusOr<v1::CoefficientSet> set =
      scorer::ParseCoefficientSet(json, "test set");
  EXPECT_TRUE(set.ok()) << set.status();
  if (!set.ok()) return nullptr;
  auto plan = scorer::ScoringPlan::Compile(*std::move(set), "test set");
  EXPECT_TRUE(plan.ok()) << plan.status();
  return plan.ok() ? *plan : nullptr;
}

}  // namespace plumbline::daemon::testing
