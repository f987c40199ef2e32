// File: tests/testing/test_sets.h
//
// The coefficient set the daemon tests score against: a small courier set
// ("does the first delivery attempt fail") with every transform and every
// missing rule, written as set-file JSON. Its coefficients are spelled out in
// CourierSetJson so tests can compute expected log-odds by hand.
//
//   distance_km  numeric  center 5, scale 2.5, clip [0, 40], coef 0.8; REJECT
//   parcel_kg    numeric  center 2, scale 1, coef 0.3; IMPUTE 3
//   region       categorical urban -0.4, suburban 0.1, rural 0.9,
//                reference suburban, UNSEEN_REJECT; INDICATOR 0.25
//   service      categorical standard 0, express -0.3, UNSEEN_AS_MISSING;
//                IMPUTE "standard"
//   hour         binned edges 9, 12, 17, coefs 0.2, -0.1, 0, 0.5,
//                reference 13; INDICATOR 0.4
//   intercept    -1.5 (overridable)
#ifndef PLUMBLINE_TESTS_TESTING_TEST_SETS_H_
#define PLUMBLINE_TESTS_TESTING_TEST_SETS_H_

#include <memory>
#include <string>

#include "absl/strings/string_view.h"
#include "scorer/scoring_plan.h"

namespace plumbline::daemon::testing {

std::string CourierSetJson(absl::string_view name, absl::string_view version,
                           double intercept = -1.5);

// CourierSetJson compiled (aborts the test binary if it does not compile).
std::shared_ptr<const scorer::ScoringPlan> CourierPlan(
    absl::string_view name = "courier", absl::string_view version = "v1");

// A second, one-feature set (numeric "stops", coef 0.1, IMPUTE 0).
std::string DepotSetJson(absl::string_view name, absl::string_view version);

// Well-formed JSON that fails validation (a numeric scale of 0).
std::string InvalidSetJson(absl::string_view name, absl::string_view version);

}  // namespace plumbline::daemon::testing

#endif  // PLUMBLINE_TESTS_TESTING_TEST_SETS_H_
