// File: tests/daemon/refit/job_test.cc
//
// One refit job (daemon/refit/job.h) on a real ledger in a temp directory:
// the records are the test courier set's (tests/testing/test_sets.h, every
// transform and missing rule), scored by it, with labels drawn from its own
// log-odds plus a shift (seeded). Checks the training window (drift onset,
// the min_labelled extension, the most recent window), the out-of-time
// holdout (the latest records by score time) against RANDOM_BY_ID, and that
// a pure base-rate shift ends at rung 1 with a candidate that differs from
// the active set in its intercept only, bit for bit.
#include "daemon/refit/job.h"

#include <cmath>
#include <filesystem>
#include <memory>
#include <random>
#include <string>
#include <vector>

#include "absl/strings/match.h"
#include "absl/strings/str_cat.h"
#include "daemon/ledger/sqlite_ledger.h"
#include "daemon/registry/lifecycle.h"
#include "daemon/registry/sqlite_version_store.h"
#include "daemon/registry/version_store.h"
#include "daemon/review/dossier_html.h"
#include "daemon/scoring/packed_row.h"
#include "daemon/scoring/set_registry.h"
#include "google/protobuf/util/message_differencer.h"
#include "gtest/gtest.h"
#include "scorer/coefficient_set.h"
#include "tests/testing/process.h"
#include "tests/testing/test_sets.h"

namespace plumbline::daemon {
namespace {

using testing::TempDir;

constexpr int kRecords = 3000;
const absl::Time kStart = absl::FromUnixSeconds(1796170000);

std::string Utc(absl::Time t) {
  return absl::FormatTime("%Y-%m-%dT%H:%M:%SZ", t, absl::UTCTimeZone());
}

class RefitJobTest : public ::testing::Test {
 protected:
  // Scores kRecords records, one a second from kStart, and reports labels
  // drawn from logistic(log-odds + shift).
  void SetUp() override {
    std::filesystem::create_directories(dir_.File("sets"));
    ASSERT_TRUE(testing::WriteTextFile(dir_.File("sets/courier.json"),
                                       testing::CourierSetJson("courier", "v1"))
                    .ok());
    LedgerOptions options;
    options.path = dir_.File("ledger.db");
    ledger_ = *SqliteLedger::Open(options);
    store_ = *SqliteVersionStore::Open(options.path);
    lifecycle_ = std::make_unique<Lifecycle>(store_.get());
    registry_ =
        std::make_unique<SetRegistry>(dir_.File("sets"), lifecycle_.get());
    lifecycle_->Attach(registry_.get(), [](const ReloadReport&) {});
    ASSERT_TRUE(registry_->Reload().ok());
  }

  void Fill(double shift) {
    PlanPtr plan = registry_->Find("courier");
    ASSERT_NE(plan, nullptr);
    auto layout = std::make_shared<const v1::RowLayout>(LayoutOf(*plan));
    std::mt19937_64 rng(20);
    std::uniform_real_distribution<double> unit(0, 1);
    const char* regions[] = {"urban", "suburban", "rural"};
    const char* services[] = {"standard", "express"};
    std::vector<ScoreEntry> scores;
    std::vector<OutcomeEntry> outcomes;
    for (int i = 0; i < kRecords; ++i) {
      std::vector<scorer::RawValue> values = {
          scorer::RawValue::Number(30 * unit(rng)),
          unit(rng) < 0.1 ? scorer::RawValue::Missing()
                          : scorer::RawValue::Number(0.5 + 7 * unit(rng)),
          scorer::RawValue::Text(regions[static_cast<int>(3 * unit(rng))]),
          scorer::RawValue::Text(services[static_cast<int>(2 * unit(rng))]),
          unit(rng) < 0.1
              ? scorer::RawValue::Missing()
              : scorer::RawValue::Number(std::floor(24 * unit(rng)))};
      absl::StatusOr<scorer::ScoreResult> r = plan->Score(values, {});
      ASSERT_TRUE(r.ok()) << r.status();
      std::vector<uint8_t> sent(values.size(), 1);
      ScoreEntry e;
      e.record_id = absl::StrCat("parcel-", i);
      e.set_name = "courier";
      e.set_version = "v1";
      e.scored_at = kStart + absl::Seconds(i);
      e.log_odds = r->log_odds;
      e.probability = r->probability;
      PackFeatures(*plan, values, sent, &e.features);
      e.layout = layout;
      scores.push_back(std::move(e));
      const double p = 1 / (1 + std::exp(-(r->log_odds + shift)));
      outcomes.push_back({absl::StrCat("parcel-", i), unit(rng) < p ? 1 : 0,
                          kStart + absl::Hours(1) + absl::Seconds(i)});
    }
    ASSERT_TRUE(ledger_->AppendScores(std::move(scores)).ok());
    absl::StatusOr<std::vector<OutcomeResult>> reported =
        ledger_->ReportOutcomes(std::move(outcomes));
    ASSERT_TRUE(reported.ok()) << reported.status();
  }

  RefitOutcome Run(RefitSettings settings, RefitTrigger trigger) {
    RefitRunner runner(ledger_.get(), lifecycle_.get(), registry_.get(),
                       settings, [] { return kStart + absl::Hours(3); });
    return runner.Run(trigger, ++job_);
  }

  TempDir dir_;
  std::unique_ptr<Ledger> ledger_;
  std::unique_ptr<VersionStore> store_;
  std::unique_ptr<Lifecycle> lifecycle_;
  std::unique_ptr<SetRegistry> registry_;
  int64_t job_ = 0;
};

TEST_F(RefitJobTest, BaseRateShiftEndsAtRungOneChangingOnlyTheIntercept) {
  Fill(0.8);
  RefitSettings settings;
  settings.min_labelled = 1000;
  RefitOutcome outcome = Run(settings, {"courier", RefitTriggerKind::kManual,
                                        "test", "test", std::nullopt});
  ASSERT_TRUE(outcome.ladder.has_value()) << outcome.summary;
  EXPECT_EQ(outcome.ladder->chosen(), 1) << outcome.summary;
  ASSERT_TRUE(outcome.candidate.has_value()) << outcome.summary;
  const v1::CoefficientSet& before = registry_->Find("courier")->set();
  absl::StatusOr<v1::CoefficientSet> after =
      scorer::ParseCoefficientSet(outcome.candidate->document, "candidate");
  ASSERT_TRUE(after.ok()) << after.status();
  // Every coefficient and transform bit for bit (baselines are fresh).
  ASSERT_EQ(after->features_size(), before.features_size());
  for (int i = 0; i < before.features_size(); ++i) {
    v1::Feature a = before.features(i), b = after->features(i);
    a.clear_baseline();
    b.clear_baseline();
    EXPECT_TRUE(google::protobuf::util::MessageDifferencer::Equals(a, b))
        << a.DebugString() << " vs " << b.DebugString();
  }
  // The intercept moved by rung 1's fit; with a true shift of 0.8 on 2100
  // records its standard error is about 0.05 (1 / sqrt(n p (1 - p)),
  // a hand bound), so 0.8 +/- 0.25 is a loose check.
  EXPECT_NEAR(after->intercept() - before.intercept(), 0.8, 0.25);
  EXPECT_NE(after->intercept(), before.intercept());
  // Out of time: the latest 900 of 3000 records by score time held out.
  EXPECT_TRUE(absl::StrContains(outcome.summary,
                                "out of time: the latest 900 by score time"))
      << outcome.summary;
  EXPECT_TRUE(absl::StrContains(
      outcome.summary,
      absl::StrCat("scored ", Utc(kStart + absl::Seconds(2100)), " to ",
                   Utc(kStart + absl::Seconds(2999)))))
      << outcome.summary;
  EXPECT_EQ(outcome.ladder->training_records(), 2100);
  // The audit has the ladder row.
  bool ladder_row = false;
  absl::StatusOr<std::vector<AuditRecord>> audit = lifecycle_->Audit("courier");
  ASSERT_TRUE(audit.ok()) << audit.status();
  for (const AuditRecord& r : *audit) {
    ladder_row = ladder_row || (r.action == "ladder" &&
                                absl::StrContains(r.detail, "chose rung 1"));
  }
  EXPECT_TRUE(ladder_row);
  // The dossier draws the ladder and says the holdout was out of time.
  v1::Dossier dossier;
  *dossier.mutable_ladder() = *outcome.ladder;
  dossier.set_holdout_split("out_of_time");
  const std::string html = RenderDossier(dossier, DriftPolicy());
  EXPECT_TRUE(absl::StrContains(html, "id=\"ladder\"")) << html;
  EXPECT_TRUE(absl::StrContains(html, "data-rung=\"3\"")) << html;
  EXPECT_TRUE(absl::StrContains(html, "Chose rung 1:")) << html;
  EXPECT_TRUE(absl::StrContains(html, "The holdout is out of time")) << html;
}

TEST_F(RefitJobTest, DriftJobsTrainOnTheRecordsSinceTheOnset) {
  Fill(0.8);
  RefitSettings settings;
  settings.min_labelled = 1000;
  RefitTrigger trigger{"courier",    RefitTriggerKind::kDrift,
                       "",           "drifting",
                       std::nullopt, kStart + absl::Seconds(1000)};
  RefitOutcome outcome = Run(settings, trigger);
  EXPECT_TRUE(absl::StrContains(
      outcome.summary,
      absl::StrCat("since the drift onset ", Utc(kStart + absl::Seconds(1000)),
                   ": 2000 labelled records scored since (of 3000 read)")))
      << outcome.summary;
  // 2000 records, the latest 600 held out.
  ASSERT_TRUE(outcome.ladder.has_value()) << outcome.summary;
  EXPECT_EQ(outcome.ladder->training_records(), 1400);

  // Only 200 scored since the onset: extended back to min_labelled, said so.
  trigger.drift_onset = kStart + absl::Seconds(2800);
  outcome = Run(settings, trigger);
  EXPECT_TRUE(absl::StrContains(
      outcome.summary,
      "only 200 labelled records scored since, fewer than "
      "refit.min_labelled 1000, so extended back to the 1000 most recent "
      "(800 from before the onset"))
      << outcome.summary;

  // Under MOST_RECENT the onset is ignored.
  settings.training_window = v1::RefitPolicy::MOST_RECENT;
  settings.window_labelled = 2500;
  outcome = Run(settings, trigger);
  EXPECT_TRUE(absl::StrContains(
      outcome.summary,
      "the most recent 2500 labelled records by score time (of 3000 read)"))
      << outcome.summary;
}

TEST_F(RefitJobTest, RandomByIdHoldoutIsTheHashSplit) {
  Fill(0.8);
  RefitSettings settings;
  settings.min_labelled = 1000;
  settings.holdout = v1::RefitPolicy::RANDOM_BY_ID;
  RefitOutcome outcome = Run(settings, {"courier", RefitTriggerKind::kManual,
                                        "test", "test", std::nullopt});
  int64_t held = 0;
  for (int i = 0; i < kRecords; ++i) {
    held += InHoldout(absl::StrCat("parcel-", i), settings.holdout_fraction);
  }
  ASSERT_TRUE(outcome.ladder.has_value()) << outcome.summary;
  EXPECT_EQ(outcome.ladder->training_records(), kRecords - held);
  EXPECT_TRUE(absl::StrContains(outcome.summary, "random by record id"))
      << outcome.summary;
}

TEST(RefitSettingsTest, BadLadderSettingsNameTheField) {
  v1::RefitPolicy p;
  p.set_ladder_alpha(1.5);
  absl::StatusOr<RefitSettings> s = RefitSettingsFrom(p);
  ASSERT_FALSE(s.ok());
  EXPECT_TRUE(absl::StrContains(s.status().message(), "refit.ladder_alpha"));
  p.set_ladder_alpha(0);
  p.set_holdout(static_cast<v1::RefitPolicy::Holdout>(7));
  s = RefitSettingsFrom(p);
  ASSERT_FALSE(s.ok());
  EXPECT_TRUE(absl::StrContains(s.status().message(), "refit.holdout"));
  // Defaults: out of time, since the onset, alpha 0.05.
  s = RefitSettingsFrom(v1::RefitPolicy());
  ASSERT_TRUE(s.ok());
  EXPECT_EQ(s->holdout, v1::RefitPolicy::OUT_OF_TIME);
  EXPECT_EQ(s->training_window, v1::RefitPolicy::SINCE_DRIFT_ONSET);
  EXPECT_EQ(s->ladder_alpha, 0.05);
}

}  // namespace
}  // namespace plumbline::daemon
