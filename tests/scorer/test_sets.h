// File: tests/scorer/test_sets.h
//
// A small coefficient set with one feature of every transform and every
// missing rule, shared by the scorer tests. Its numbers are chosen by hand so
// expected log-odds can be worked out on paper.
#ifndef PLUMBLINE_TESTS_SCORER_TEST_SETS_H_
#define PLUMBLINE_TESTS_SCORER_TEST_SETS_H_

namespace plumbline::testing {

// distance_km: numeric, centre 5, scale 2, clipped to [0, 20], coef 0.5,
//              missing -> impute 5 (contributes 0)
// weight_kg:   numeric, centre 0, scale 1, no clip, coef -0.25,
//              missing -> indicator 0.7
// building:    categorical house 0 / flat 0.8 / office -0.4, unseen -> missing,
//              missing -> impute "house", reference "house"
// hour:        binned edges [9, 17] coefs [0.3, 0, 0.6], missing -> reject,
//              reference 12 (middle bin, contribution 0)
// rain_mm:     numeric, centre 0, scale 1, coef 0.1, missing -> reject
inline constexpr char kAllTransformsSetJson[] = R"json({
  "name": "courier_test",
  "version": "t1",
  "intercept": -1.5,
  "features": [
    {"name": "distance_km",
     "numeric": {"center": 5, "scale": 2, "clip_low": 0, "clip_high": 20,
                 "coefficient": 0.5},
     "missing": {"kind": "IMPUTE", "impute_number": 5}},
    {"name": "weight_kg",
     "numeric": {"center": 0, "scale": 1, "coefficient": -0.25},
     "missing": {"kind": "INDICATOR", "indicator_coefficient": 0.7}},
    {"name": "building",
     "categorical": {"levels": [{"value": "house", "coefficient": 0},
                                {"value": "flat", "coefficient": 0.8},
                                {"value": "office", "coefficient": -0.4}],
                     "unseen": "UNSEEN_AS_MISSING",
                     "reference_level": "house"},
     "missing": {"kind": "IMPUTE", "impute_level": "house"}},
    {"name": "hour",
     "binned": {"edges": [9, 17], "coefficients": [0.3, 0, 0.6],
                "reference": 12}},
    {"name": "rain_mm",
     "numeric": {"center": 0, "scale": 1, "coefficient": 0.1}}
  ]
})json";

}  // namespace plumbline::testing

#endif  // PLUMBLINE_TESTS_SCORER_TEST_SETS_H_
