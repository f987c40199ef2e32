// File: tests/testing/test_sets.cc
#include "tests/testing/test_sets.h"

#include <cstdio>
#include <cstdlib>
#include <string>
#include <utility>

#include "absl/strings/str_format.h"
#include "scorer/coefficient_set.h"

namespace plumbline::daemon::testing {

std::string CourierSetJson(absl::string_view name, absl::string_view version,
                           double intercept) {
  return absl::StrFormat(R"json({
  "name": "%s",
  "version": "%s",
  "description": "first delivery attempt fails",
  "intercept": %.17g,
  "features": [
    {"name": "distance_km",
     "numeric": {"center": 5, "scale": 2.5, "clipLow": 0, "clipHigh": 40,
                 "coefficient": 0.8}},
    {"name": "parcel_kg",
     "numeric": {"center": 2, "scale": 1, "coefficient": 0.3},
     "missing": {"kind": "IMPUTE", "imputeNumber": 3}},
    {"name": "region",
     "categorical": {"levels": [{"value": "urban", "coefficient": -0.4},
                                {"value": "suburban", "coefficient": 0.1},
                                {"value": "rural", "coefficient": 0.9}],
                     "referenceLevel": "suburban"},
     "missing": {"kind": "INDICATOR", "indicatorCoefficient": 0.25}},
    {"name": "service",
     "categorical": {"levels": [{"value": "standard", "coefficient": 0},
                                {"value": "express", "coefficient": -0.3}],
                     "unseen": "UNSEEN_AS_MISSING"},
     "missing": {"kind": "IMPUTE", "imputeLevel": "standard"}},
    {"name": "hour",
     "binned": {"edges": [9, 12, 17], "coefficients": [0.2, -0.1, 0.0, 0.5],
                "reference": 13},
     "missing": {"kind": "INDICATOR", "indicatorCoefficient": 0.4}}
  ]
}
)json",
                         name, version, intercept);
}

std::shared_ptr<const scorer::ScoringPlan> CourierPlan(
    absl::string_view name, absl::string_view version) {
  auto set = scorer::ParseCoefficientSet(CourierSetJson(name, version),
                                         "courier test set");
  if (!set.ok()) {
    std::fprintf(stderr, "%s\n", std::string(set.status().message()).c_str());
    std::abort();
  }
  auto plan = scorer::ScoringPlan::Compile(*std::move(set), "courier.json");
  if (!plan.ok()) {
    std::fprintf(stderr, "%s\n", std::string(plan.status().message()).c_str());
    std::abort();
  }
  return *std::move(plan);
}

std::string DepotSetJson(absl::string_view name, absl::string_view version) {
  return absl::StrFormat(R"json({
  "name": "%s",
  "version": "%s",
  "intercept": -2,
  "features": [
    {"name": "stops", "numeric": {"center": 0, "scale": 1, "coefficient": 0.1},
     "missing": {"kind": "IMPUTE", "imputeNumber": 0}}
  ]
}
)json",
                         name, version);
}

std::string InvalidSetJson(absl::string_view name, absl::string_view version) {
  return absl::StrFormat(R"json({
  "name": "%s",
  "version": "%s",
  "intercept": 0,
  "features": [
    {"name": "stops", "numeric": {"center": 0, "scale": 0, "coefficient": 1}}
  ]
}
)json",
                         name, version);
}

}  // namespace plumbline::daemon::testing
