// File: tests/fuzz/fuzz_plan.h
//
// The coefficient set the fuzz targets score against: the scorer tests' set
// with one feature of every transform and every missing rule
// (tests/scorer/test_sets.h), compiled once per process.
//
// Thread-safe: the plan is immutable; FuzzPlan() initialises it once.
#ifndef PLUMBLINE_TESTS_FUZZ_FUZZ_PLAN_H_
#define PLUMBLINE_TESTS_FUZZ_FUZZ_PLAN_H_

#include <cstdlib>
#include <memory>

#include "scorer/coefficient_set.h"
#include "scorer/scoring_plan.h"
#include "tests/scorer/test_sets.h"

namespace plumbline::fuzz {

inline const scorer::ScoringPlan& FuzzPlan() {
  static const auto* plan = [] {
    auto set = scorer::ParseCoefficientSet(testing::kAllTransformsSetJson,
                                           "fuzz plan");
    if (!set.ok()) std::abort();
    auto compiled = scorer::ScoringPlan::Compile(*set, "fuzz plan");
    if (!compiled.ok()) std::abort();
    return new std::shared_ptr<const scorer::ScoringPlan>(*compiled);
  }();
  return **plan;
}

}  // namespace plumbline::fuzz

#endif  // PLUMBLINE_TESTS_FUZZ_FUZZ_PLAN_H_
