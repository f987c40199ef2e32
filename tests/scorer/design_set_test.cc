#include "scorer/design_set.h"

#include <cmath>
#include <cstdio>
#include <random>
#include <string>
#include <vector>

#include "gmock/gmock.h"
#include "gtest/gtest.h"
#include "scorer/coefficient_set.h"
#include "scorer/logistic.h"
#include "scorer/scoring_plan.h"

namespace plumbline::scorer {
namespace {

using ::testing::HasSubstr;

constexpr const char* kBuildings[] = {"house", "flat", "office", "shop"};

// Invented courier data: distance, building, hour, weight (sometimes
// missing) and a first-attempt failure label from a made-up true model.
struct Parcels {
  std::vector<std::vector<RawValue>> records;
  Eigen::VectorXd failed;
};

Parcels MakeParcels(int n, unsigned seed) {
  std::mt19937_64 rng(seed);
  std::uniform_real_distribution<double> uniform;
  std::exponential_distribution<double> distance(0.2);
  Parcels p;
  p.failed.resize(n);
  for (int i = 0; i < n; ++i) {
    const double km = distance(rng);
    const int building = static_cast<int>(uniform(rng) * 4);
    const double hour = 7 + 14 * uniform(rng);
    const bool weighed = uniform(rng) > 0.15;
    const double kg = 0.2 + 20 * uniform(rng) * uniform(rng);
    p.records.push_back({RawValue::Number(km),
                         RawValue::Text(kBuildings[building]),
                         RawValue::Number(hour),
                         weighed ? RawValue::Number(kg) : RawValue::Missing()});
    const double eta = -1.2 + 0.08 * km + (building == 2 ? 0.9 : 0.0) -
                       (building == 1 ? 0.4 : 0.0) + (hour > 17 ? 0.7 : 0.0) +
                       (weighed ? 0.03 * kg : 0.5);
    p.failed[i] = uniform(rng) < Logistic(eta) ? 1.0 : 0.0;
  }
  return p;
}

std::vector<FeatureSpec> Specs() {
  return {{.name = "distance_km"},
          {.name = "building", .kind = FeatureKind::kCategorical},
          {.name = "hour", .kind = FeatureKind::kBinned, .bins = 4},
          {.name = "weight_kg", .missing = v1::MissingRule::INDICATOR}};
}

struct Fitted {
  DesignLayout layout;
  FitResult fit;
};

Fitted FitParcels(const Parcels& parcels, double lambda) {
  absl::StatusOr<DesignLayout> layout =
      DesignLayout::Learn(Specs(), parcels.records);
  EXPECT_TRUE(layout.ok()) << layout.status();
  absl::StatusOr<RowMatrix> x = layout->Encode(parcels.records);
  EXPECT_TRUE(x.ok()) << x.status();
  FitOptions options;
  options.l2_lambda = lambda;
  absl::StatusOr<FitResult> fit = FitLogistic(
      *x, parcels.failed, Eigen::VectorXd(), layout->column_names(), options);
  EXPECT_TRUE(fit.ok()) << fit.status();
  return {*std::move(layout), *std::move(fit)};
}

const SetDescription kDescription = {
    .name = "courier_first_attempt",
    .version = "test-1",
    .description = "Invented parcels",
    .created_by = "design_set_test",
    .training_data = "1500 invented parcels",
    .created_at = absl::FromUnixSeconds(1700000000) + absl::Milliseconds(250)};

TEST(DesignSetTest, FittedSetScoresTrainingRecordsAsFitted) {
  const Parcels parcels = MakeParcels(1500, 31);
  const Fitted f = FitParcels(parcels, 0);
  ASSERT_TRUE(f.fit.converged);
  absl::StatusOr<v1::CoefficientSet> set =
      CoefficientSetFromFit(f.layout, f.fit, kDescription);
  ASSERT_TRUE(set.ok()) << set.status();
  // The set goes through its JSON file form too, as it would on disk.
  absl::StatusOr<std::string> json = CoefficientSetToJson(*set);
  ASSERT_TRUE(json.ok());
  absl::StatusOr<v1::CoefficientSet> reread =
      ParseCoefficientSet(*json, "fitted.json");
  ASSERT_TRUE(reread.ok()) << reread.status();
  for (const v1::CoefficientSet& s : {*set, *reread}) {
    absl::StatusOr<std::shared_ptr<const ScoringPlan>> plan =
        ScoringPlan::Compile(s, "fitted");
    ASSERT_TRUE(plan.ok()) << plan.status();
    double worst = 0;
    for (size_t i = 0; i < parcels.records.size(); ++i) {
      absl::StatusOr<ScoreResult> r = (*plan)->Score(parcels.records[i]);
      ASSERT_TRUE(r.ok()) << r.status();
      worst = std::max(
          worst,
          std::abs(r->probability -
                   f.fit.fitted_probabilities[static_cast<Eigen::Index>(i)]));
    }
    EXPECT_LE(worst, 1e-12);
    std::printf("round trip: max |p_plan - p_fit| = %.3g\n", worst);
  }
}

TEST(DesignSetTest, ReferenceLevelsAndBinsScoreZero) {
  const Fitted f = FitParcels(MakeParcels(1500, 32), 0);
  absl::StatusOr<v1::CoefficientSet> set =
      CoefficientSetFromFit(f.layout, f.fit, kDescription);
  ASSERT_TRUE(set.ok()) << set.status();
  const auto& building = set->features(1).categorical();
  for (const auto& level : building.levels()) {
    if (level.value() == building.reference_level()) {
      EXPECT_EQ(level.coefficient(), 0);
    } else {
      EXPECT_NE(level.coefficient(), 0) << level.value();
    }
  }
  int zero_bins = 0;
  for (double c : set->features(2).binned().coefficients()) zero_bins += c == 0;
  EXPECT_EQ(zero_bins, 1);
  EXPECT_EQ(set->intercept(), f.fit.intercept);
  EXPECT_EQ(set->features(0).numeric().coefficient(), f.fit.coefficients[0]);
  EXPECT_EQ(set->features(3).missing().indicator_coefficient(),
            f.fit.coefficients[f.layout.num_columns() - 1]);
}

TEST(DesignSetTest, ProvenanceAndScoreBaseline) {
  const Fitted f = FitParcels(MakeParcels(1500, 33), 0.5);
  absl::StatusOr<v1::CoefficientSet> set =
      CoefficientSetFromFit(f.layout, f.fit, kDescription);
  ASSERT_TRUE(set.ok()) << set.status();
  EXPECT_EQ(set->name(), "courier_first_attempt");
  EXPECT_EQ(set->version(), "test-1");
  const v1::Provenance& p = set->provenance();
  EXPECT_EQ(p.method(), "IRLS, L2 lambda=0.5");
  EXPECT_EQ(p.training_rows(), 1500);
  EXPECT_EQ(p.training_log_likelihood(), f.fit.log_likelihood);
  EXPECT_DOUBLE_EQ(p.training_log_loss(), -f.fit.log_likelihood / 1500);
  EXPECT_EQ(p.created_at().seconds(), 1700000000);
  EXPECT_EQ(p.created_at().nanos(), 250000000);
  EXPECT_THAT(p.notes(), HasSubstr("from the penalised information matrix"));
  EXPECT_THAT(p.notes(), HasSubstr("weight_kg:missing"));
  const v1::Distribution& score = set->score_baseline();
  EXPECT_EQ(score.edges_size(), 9);  // deciles of 1500 distinct probabilities
  double sum = 0;
  for (double share : score.proportions()) sum += share;
  EXPECT_NEAR(sum, 1, 1e-12);
  EXPECT_EQ(score.count(), 1500);
  EXPECT_EQ(score.min(), f.fit.fitted_probabilities.minCoeff());
}

TEST(DesignSetTest, RefusesUnconvergedOrMismatchedFits) {
  const Fitted f = FitParcels(MakeParcels(500, 34), 0);
  FitResult unconverged = f.fit;
  unconverged.converged = false;
  unconverged.stop_reason = "no convergence after 1 iterations";
  absl::StatusOr<v1::CoefficientSet> set =
      CoefficientSetFromFit(f.layout, unconverged, kDescription);
  EXPECT_EQ(set.status().code(), absl::StatusCode::kFailedPrecondition);
  EXPECT_THAT(set.status().message(), HasSubstr("did not converge"));
  FitResult narrow = f.fit;
  narrow.coefficients.conservativeResize(2);
  set = CoefficientSetFromFit(f.layout, narrow, kDescription);
  EXPECT_EQ(set.status().code(), absl::StatusCode::kInvalidArgument);
  SetDescription bad = kDescription;
  bad.name = "no spaces";
  set = CoefficientSetFromFit(f.layout, f.fit, bad);
  EXPECT_EQ(set.status().code(), absl::StatusCode::kInvalidArgument);
}

}  // namespace
}  // namespace plumbline::scorer
