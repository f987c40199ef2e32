// File: tests/daemon/review/version_view_test.cc
//
// One version and two versions side by side, on small hand-written sets:
// the coefficient lines with the standard errors of the notes, the diff's
// statuses, changes and changes in standard errors (hand arithmetic in the
// comments), transforms and levels added or dropped, and the baseline PSI
// against monitor::PsiFromProportions' definition worked by hand.
#include "daemon/review/version_view.h"

#include <cmath>
#include <string>

#include "gmock/gmock.h"
#include "google/protobuf/util/json_util.h"
#include "gtest/gtest.h"

namespace plumbline::daemon {
namespace {

using ::testing::ElementsAre;
using ::testing::HasSubstr;

v1::CoefficientSet Parse(const std::string& json) {
  v1::CoefficientSet set;
  EXPECT_TRUE(google::protobuf::util::JsonStringToMessage(json, &set).ok())
      << json;
  return set;
}

// The active version: fitted by Plumbline (notes in the fitter's words).
const char kFrom[] = R"json({
  "name": "courier", "version": "v1", "intercept": -2.0,
  "features": [
    {"name": "distance_km", "numeric": {"center": 6, "scale": 4,
      "coefficient": 0.4}},
    {"name": "building", "categorical": {"levels": [
      {"value": "house", "coefficient": 0}, {"value": "flat", "coefficient": 0.5}],
      "reference_level": "house", "unseen": "UNSEEN_AS_MISSING"},
     "missing": {"kind": "INDICATOR", "indicator_coefficient": 0.2},
     "baseline": {"level_proportions": {"house": 0.6, "flat": 0.4}}},
    {"name": "hour", "binned": {"edges": [12], "coefficients": [0, 0.3],
      "reference": 8}}
  ],
  "provenance": {"method": "IRLS", "notes": "converged in 6 Newton iterations (max |gradient| per unit weight 1e-12); null log-likelihood -700.5; McFadden pseudo-R^2 0.120000; AIC 1240.25; standard errors: intercept 0.1, distance_km 0.05, building=flat 0.25, building:missing 0.4, hour>=12 0.15"}
})json";

// The candidate: new centre, a new level, a dropped feature, a new one.
const char kTo[] = R"json({
  "name": "courier", "version": "v2", "intercept": -1.8,
  "features": [
    {"name": "distance_km", "numeric": {"center": 6.5, "scale": 4,
      "coefficient": 0.5}},
    {"name": "building", "categorical": {"levels": [
      {"value": "house", "coefficient": 0}, {"value": "flat", "coefficient": 0.5},
      {"value": "locker", "coefficient": -1.2}],
      "reference_level": "house", "unseen": "UNSEEN_AS_MISSING"},
     "missing": {"kind": "INDICATOR", "indicator_coefficient": 0.1},
     "baseline": {"level_proportions": {"house": 0.5, "flat": 0.3,
                                        "locker": 0.2}}},
    {"name": "rain_mm", "numeric": {"center": 2, "scale": 3,
      "coefficient": 0.3}}
  ],
  "provenance": {"method": "IRLS", "notes": "standard errors: intercept 0.12, distance_km 0.06"}
})json";

TEST(VersionViewTest, StandardErrorsFromBothWritersNotes) {
  EXPECT_THAT(
      StandardErrorsFromNotes("converged; standard errors: intercept "
                              "0.1, a=b c 0.2, x:missing 3e-05"),
      ElementsAre(std::pair<const std::string, double>("a=b c", 0.2),
                  std::pair<const std::string, double>("intercept", 0.1),
                  std::pair<const std::string, double>("x:missing", 3e-05)));
  // The statsmodels export ends the list with "; log-likelihood ...".
  auto se = StandardErrorsFromNotes(
      "standard errors (statsmodels 0.13.5, nonrobust): const 0.5, x1 0.25; "
      "log-likelihood -12.5");
  EXPECT_EQ(se.size(), 2u);
  EXPECT_EQ(se["x1"], 0.25);
  EXPECT_TRUE(StandardErrorsFromNotes("no such list").empty());
}

TEST(VersionViewTest, CoefficientLinesInColumnOrder) {
  const std::vector<v1::CoefficientLine> lines = CoefficientLines(Parse(kFrom));
  std::vector<std::string> labels;
  for (const auto& l : lines) labels.push_back(l.label());
  EXPECT_THAT(labels, ElementsAre("intercept", "distance_km", "building=house",
                                  "building=flat", "building:missing",
                                  "hour<12", "hour>=12"));
  EXPECT_EQ(lines[0].standard_error(), 0.1);
  // 0.4 per (x - 6) / 4: 0.1 log-odds per km.
  EXPECT_DOUBLE_EQ(lines[1].per_unit(), 0.1);
  EXPECT_TRUE(lines[2].reference());
  EXPECT_FALSE(lines[2].has_standard_error());
  EXPECT_FALSE(lines[3].reference());
  EXPECT_EQ(lines[4].standard_error(), 0.4);
  EXPECT_TRUE(lines[5].reference());  // 8 lies in the bin below 12
  EXPECT_EQ(lines[6].standard_error(), 0.15);
}

TEST(VersionViewTest, FitStatisticsFromTheNotes) {
  const v1::FitSummary fit = SummarizeFit(Parse(kFrom).provenance());
  EXPECT_EQ(fit.iterations(), 6);
  EXPECT_EQ(fit.null_log_likelihood(), -700.5);
  EXPECT_EQ(fit.aic(), 1240.25);
  EXPECT_EQ(fit.pseudo_r2(), 0.12);
}

TEST(VersionViewTest, DiffLinesUpCoefficientsAndFeatures) {
  v1::VersionInfo a, b;
  a.set_version("v1");
  b.set_version("v2");
  const v1::VersionDiff d = DiffSets(a, Parse(kFrom), b, Parse(kTo));
  std::map<std::string, v1::CoefficientChange> by_label;
  for (const auto& c : d.coefficients()) by_label[c.label()] = c;
  // intercept: -1.8 - (-2.0) = 0.2, / 0.1 = 2 standard errors.
  EXPECT_EQ(by_label["intercept"].status(), "changed");
  EXPECT_NEAR(by_label["intercept"].change(), 0.2, 1e-15);
  EXPECT_NEAR(by_label["intercept"].change_in_standard_errors(), 2, 1e-14);
  EXPECT_EQ(by_label["intercept"].to_standard_error(), 0.12);
  // distance_km: 0.5 - 0.4 = 0.1, / 0.05 = 2.
  EXPECT_NEAR(by_label["distance_km"].change_in_standard_errors(), 2, 1e-14);
  EXPECT_EQ(by_label["building=flat"].status(), "same");
  EXPECT_EQ(by_label["building=locker"].status(), "added");
  EXPECT_FALSE(by_label["building=locker"].has_from_estimate());
  EXPECT_EQ(by_label["hour>=12"].status(), "dropped");
  EXPECT_EQ(by_label["rain_mm"].status(), "added");

  std::map<std::string, v1::FeatureChange> features;
  for (const auto& f : d.features()) features[f.feature()] = f;
  EXPECT_EQ(features["hour"].status(), "dropped");
  EXPECT_EQ(features["rain_mm"].status(), "added");
  EXPECT_THAT(features["distance_km"].changes(),
              ElementsAre("centre 6 -> 6.5"));
  EXPECT_THAT(features["building"].changes(),
              ElementsAre("levels added: locker"));
  // Levels flat, house, locker: expected 0.4, 0.6, 0 -> floored 1e-4;
  // actual 0.3, 0.5, 0.2. PSI = sum (a - e) ln(a / e).
  const double psi = (0.3 - 0.4) * std::log(0.3 / 0.4) +
                     (0.5 - 0.6) * std::log(0.5 / 0.6) +
                     (0.2 - 1e-4) * std::log(0.2 / 1e-4);
  EXPECT_NEAR(features["building"].baseline_psi(), psi, 1e-12);
}

TEST(VersionViewTest, DiffPairDefaultsToActiveAndNewestCandidate) {
  std::vector<VersionRecord> versions(3);
  versions[0].version = "c2";
  versions[0].state = VersionState::kCandidate;
  versions[1].version = "c1";
  versions[1].state = VersionState::kCandidate;
  versions[2].version = "a";
  versions[2].state = VersionState::kActive;
  auto pair = DiffPair(versions, "courier", "", "");
  ASSERT_TRUE(pair.ok()) << pair.status();
  EXPECT_EQ(pair->first.version, "a");
  EXPECT_EQ(pair->second.version, "c2");
  EXPECT_EQ(DiffPair(versions, "courier", "a", "a").status().code(),
            absl::StatusCode::kFailedPrecondition);
  auto missing = DiffPair(versions, "courier", "", "zz");
  EXPECT_EQ(missing.status().code(), absl::StatusCode::kNotFound);
  EXPECT_THAT(missing.status().message(), HasSubstr("no version zz"));
}

}  // namespace
}  // namespace plumbline::daemon
