// File: tests/testing/health_test_sets.h
//
// Coefficient sets for the monitor's unit tests, with baselines spelled out
// so tests can compute expected stability figures by hand:
//
//   distance_km  numeric center 5, scale 2.5, coef 0.8; REJECT
//                baseline edges [2, 5], proportions [0.3, 0.4, 0.3],
//                min 0, max 20
//   region       categorical urban -0.4, rural 0.9, UNSEEN_AS_MISSING;
//                INDICATOR 0.25; baseline urban 0.6, rural 0.4
//   hour         binned edges [12], coefs [0.1, -0.1]; INDICATOR 0.4;
//                no baseline
//   score_baseline  edges [0.2, 0.5], proportions [0.5, 0.3, 0.2]
//   provenance.training_log_loss  0.5
//   intercept    -1
//
// Test-only.
#ifndef PLUMBLINE_TESTS_TESTING_HEALTH_TEST_SETS_H_
#define PLUMBLINE_TESTS_TESTING_HEALTH_TEST_SETS_H_

#include <memory>
#include <string>

#include "absl/strings/string_view.h"
#include "scorer/scoring_plan.h"

namespace plumbline::daemon::testing {

std::string BaselineSetJson(absl::string_view name, absl::string_view version);

// The same features without any baseline or provenance.
std::string BareSetJson(absl::string_view name, absl::string_view version);

// Parses and compiles `json`; fails the calling test (and returns null) if
// it does not compile.
std::shared_ptr<const scorer::ScoringPlan> CompilePlan(const std::string& json);

}  // namespace plumbline::daemon::testing

#endif  // PLUMBLINE_TESTS_TESTING_HEALTH_TEST_SETS_H_
