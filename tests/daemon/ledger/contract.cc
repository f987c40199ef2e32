// The ledger's contract (daemon/ledger/ledger.h), one TEST_P per guarantee;
// see contract.h for how a backend is plugged in. Every body checks exact
// rows and counts, so a backend that drops, doubles or reorders a row fails.
#include "tests/daemon/ledger/contract.h"

#include <algorithm>
#include <atomic>
#include <cstdint>
#include <latch>
#include <map>
#include <set>
#include <string>
#include <thread>
#include <utility>
#include <vector>

#include "absl/container/flat_hash_map.h"
#include "absl/strings/str_cat.h"
#include "absl/synchronization/mutex.h"
#include "absl/time/clock.h"
#include "daemon/scoring/packed_row.h"
#include "gmock/gmock.h"
#include "tests/testing/status_matchers.h"
#include "tests/testing/test_sets.h"

namespace plumbline::daemon::testing {

void PrintTo(const LedgerBackend& backend, std::ostream* os) {
  *os << backend.name;
}

std::string LedgerBackendName(
    const ::testing::TestParamInfo<LedgerBackend>& info) {
  return info.param.name;
}

void LedgerContractTest::SetUp() {
  absl::StatusOr<LedgerOptions> options =
      GetParam().fresh_options(temp_.path());
  ASSERT_TRUE(options.ok()) << options.status();
  options_ = *std::move(options);
}

void LedgerContractTest::TearDown() {
  ledgers_.clear();  // drains and stops every writer first
  if (GetParam().discard) {
    EXPECT_OK(GetParam().discard(options_));
  }
}

Ledger* LedgerContractTest::Open() {
  absl::StatusOr<std::unique_ptr<Ledger>> ledger = GetParam().open(options_);
  EXPECT_TRUE(ledger.ok()) << GetParam().name << ": " << ledger.status();
  if (!ledger.ok()) return nullptr;
  ledgers_.push_back(*std::move(ledger));
  return ledgers_.back().get();
}

namespace {

using ::plumbline::testing::StatusIs;
using ::testing::ElementsAre;
using ::testing::HasSubstr;
using ::testing::IsEmpty;
using ::testing::UnorderedElementsAre;

// Parcels of the courier test set as plumbd's Scoring service writes them:
// features packed in the version's order, with its layout. Every parcel has
// the same features but its distance, so two distances are two records.
// Thread-safe.
class Parcels {
 public:
  // Scores are stamped base + `second` seconds: whole seconds of the last
  // hours, so a backend partitioned by day has them in today's partitions
  // (or yesterday's) and retention keeps them.
  Parcels()
      : base_(absl::FromUnixSeconds(absl::ToUnixSeconds(absl::Now())) -
              absl::Hours(2)) {}

  absl::Time At(int second) const { return base_ + absl::Seconds(second); }

  ScoreEntry Score(const std::string& id, double distance_km, int second,
                   ScoreRole role = ScoreRole::kActive,
                   const std::string& version = "v1",
                   const std::string& set = "courier") {
    const Version& v = VersionOf(set, version);
    const std::vector<scorer::RawValue> values = {
        scorer::RawValue::Number(distance_km), scorer::RawValue::Number(2.5),
        scorer::RawValue::Text("urban"), scorer::RawValue::Text("express"),
        scorer::RawValue::Number(14)};
    ScoreEntry e;
    e.record_id = id;
    e.set_name = set;
    e.set_version = version;
    e.role = role;
    e.scored_at = At(second);
    absl::StatusOr<scorer::ScoreResult> r = v.plan->Score(values, {});
    EXPECT_TRUE(r.ok()) << r.status();
    if (r.ok()) {
      e.log_odds = r->log_odds;
      e.probability = r->probability;
    }
    const std::vector<uint8_t> sent(values.size(), 1);
    PackFeatures(*v.plan, values, sent, &e.features);
    e.layout = v.layout;
    return e;
  }

 private:
  struct Version {
    std::shared_ptr<const scorer::ScoringPlan> plan;
    std::shared_ptr<const v1::RowLayout> layout;
  };
  const Version& VersionOf(const std::string& set, const std::string& version) {
    absl::MutexLock lock(&mu_);
    Version& v = versions_[absl::StrCat(set, "/", version)];
    if (v.plan == nullptr) {
      v.plan = CourierPlan(set, version);
      v.layout = std::make_shared<const v1::RowLayout>(LayoutOf(*v.plan));
    }
    return v;
  }

  const absl::Time base_;
  absl::Mutex mu_;
  // Node-based: references stay valid while others are added.
  std::map<std::string, Version> versions_ ABSL_GUARDED_BY(mu_);
};

// "record/version" of a score, "record/version/label" of a labelled one.
std::string Key(const ScoreEntry& e) {
  return absl::StrCat(e.record_id, "/", e.set_version);
}
std::string Key(const LabelledScore& l) {
  return absl::StrCat(l.record_id, "/", l.set_version, "/", l.label);
}

// What a rows observer heard, copied. Thread-safe.
class Listener {
 public:
  // REQUIRES: the listener outlives `ledger`.
  void Attach(Ledger& ledger) {
    ledger.set_rows_observer([this](const CommittedRows& rows) {
      absl::MutexLock lock(&mu_);
      for (const ScoreEntry* e : rows.scores) scores_.push_back(Key(*e));
      for (const LabelledScore* l : rows.labelled) {
        labelled_.push_back(Key(*l));
      }
      groups_.push_back({rows.scores.size(), rows.labelled.size(), rows.marks});
    });
  }
  std::vector<std::string> scores() {
    absl::MutexLock lock(&mu_);
    return scores_;
  }
  std::vector<std::string> labelled() {
    absl::MutexLock lock(&mu_);
    return labelled_;
  }
  // One per call of the observer.
  struct Group {
    size_t scores = 0;
    size_t labelled = 0;
    LedgerMarks marks;
  };
  std::vector<Group> groups() {
    absl::MutexLock lock(&mu_);
    return groups_;
  }

 private:
  absl::Mutex mu_;
  std::vector<std::string> scores_ ABSL_GUARDED_BY(mu_);
  std::vector<std::string> labelled_ ABSL_GUARDED_BY(mu_);
  std::vector<Group> groups_ ABSL_GUARDED_BY(mu_);
};

// Record ids ForEachScore gives for set "courier" (newest first).
std::vector<std::string> Newest(Ledger& ledger, int64_t limit = 1000,
                                absl::Time since = absl::InfinitePast(),
                                const LedgerMarks* upto = nullptr) {
  std::vector<std::string> ids;
  EXPECT_OK(ledger.ForEachScore(
      "courier", limit, since,
      [&](const ScoreEntry& e) { ids.push_back(e.record_id); }, upto));
  return ids;
}

// Record ids ForEachLabelled gives for set "courier" (newest outcome first).
std::vector<std::string> NewestLabelled(Ledger& ledger, int64_t limit = 1000,
                                        absl::Time since = absl::InfinitePast(),
                                        const LedgerMarks* upto = nullptr) {
  std::vector<std::string> ids;
  EXPECT_OK(ledger.ForEachLabelled(
      "courier", limit, since,
      [&](const LabelledScore& l) { ids.push_back(l.record_id); }, upto));
  return ids;
}

std::vector<std::string> ScoresAfter(Ledger& ledger, int64_t after,
                                     int64_t upto = INT64_MAX) {
  std::vector<std::string> keys;
  EXPECT_OK(ledger.ForEachScoreAfter(
      after, [&](const ScoreEntry& e) { keys.push_back(Key(e)); }, upto));
  return keys;
}

std::vector<std::string> LabelledAfter(Ledger& ledger, int64_t after,
                                       int64_t upto = INT64_MAX) {
  std::vector<std::string> keys;
  EXPECT_OK(ledger.ForEachLabelledAfter(
      after, [&](const LabelledScore& l) { keys.push_back(Key(l)); }, upto));
  return keys;
}

// Runs `fn(i)` on `n` threads released together; joins them.
void OnThreads(int n, const std::function<void(int)>& fn) {
  std::latch start(n);
  std::vector<std::thread> threads;
  for (int i = 0; i < n; ++i) {
    threads.emplace_back([&, i] {
      start.arrive_and_wait();
      fn(i);
    });
  }
  for (std::thread& t : threads) t.join();
}

// ---- Scores ----------------------------------------------------------------

// Guarantee: an acknowledged score reads back as written, by record and
// newest first, with limit and since.
TEST_P(LedgerContractTest, ScoresReadBackByRecordAndNewestFirst) {
  Ledger* ledger = Open();
  ASSERT_NE(ledger, nullptr);
  Parcels parcels;
  std::vector<ScoreEntry> written;
  for (int i = 0; i < 5; ++i) {
    written.push_back(parcels.Score(absl::StrCat("parcel-", i), 3 + i, 10 * i));
  }
  ASSERT_OK_AND_ASSIGN(std::vector<ScoreWrite> writes,
                       ledger->AppendScores(written));
  ASSERT_EQ(writes.size(), 5u);
  for (const ScoreWrite& w : writes) EXPECT_FALSE(w.repeat);

  ASSERT_OK_AND_ASSIGN(StoredRecord record,
                       ledger->FindRecord("courier", "parcel-2"));
  ASSERT_EQ(record.scores.size(), 1u);
  const ScoreEntry& got = record.scores[0];
  const ScoreEntry& want = written[2];
  EXPECT_EQ(got.record_id, "parcel-2");
  EXPECT_EQ(got.set_name, "courier");
  EXPECT_EQ(got.set_version, "v1");
  EXPECT_EQ(got.role, ScoreRole::kActive);
  EXPECT_EQ(got.scored_at, want.scored_at);
  EXPECT_EQ(got.log_odds, want.log_odds);
  EXPECT_EQ(got.probability, want.probability);
  EXPECT_EQ(got.features, want.features);
  ASSERT_NE(got.layout, nullptr);
  EXPECT_EQ(got.layout->SerializeAsString(), want.layout->SerializeAsString());
  EXPECT_FALSE(record.has_outcome);
  EXPECT_THAT(ledger->FindRecord("courier", "parcel-9"),
              StatusIs(absl::StatusCode::kNotFound));
  EXPECT_THAT(ledger->FindRecord("depot", "parcel-2"),
              StatusIs(absl::StatusCode::kNotFound));

  EXPECT_THAT(Newest(*ledger), ElementsAre("parcel-4", "parcel-3", "parcel-2",
                                           "parcel-1", "parcel-0"));
  EXPECT_THAT(Newest(*ledger, 2), ElementsAre("parcel-4", "parcel-3"));
  // since is inclusive: parcel-3 was scored at second 30.
  EXPECT_THAT(Newest(*ledger, 1000, parcels.At(30)),
              ElementsAre("parcel-4", "parcel-3"));
  EXPECT_THAT(Newest(*ledger, 1000, parcels.At(41)), IsEmpty());
}

// Guarantee: a retry (same record id and set, same features) writes
// nothing and returns the score stored the first time.
TEST_P(LedgerContractTest, RetryWithTheSameFeaturesReturnsTheStoredScore) {
  Ledger* ledger = Open();
  ASSERT_NE(ledger, nullptr);
  Parcels parcels;
  const ScoreEntry first = parcels.Score("parcel-7", 6.5, 0);
  ASSERT_OK(ledger->AppendScores(
      {first, parcels.Score("parcel-7", 6.5, 0, ScoreRole::kShadow, "v2")}));
  // The caller retries a minute later: a later time, same features.
  ASSERT_OK_AND_ASSIGN(
      std::vector<ScoreWrite> writes,
      ledger->AppendScores(
          {parcels.Score("parcel-7", 6.5, 60),
           parcels.Score("parcel-7", 6.5, 60, ScoreRole::kShadow, "v2"),
           parcels.Score("parcel-8", 4, 60)}));
  ASSERT_EQ(writes.size(), 3u);
  EXPECT_TRUE(writes[0].repeat);
  EXPECT_EQ(writes[0].stored.set_version, "v1");
  EXPECT_EQ(writes[0].stored.scored_at, first.scored_at);
  EXPECT_EQ(writes[0].stored.log_odds, first.log_odds);
  EXPECT_EQ(writes[0].stored.probability, first.probability);
  EXPECT_EQ(writes[0].stored.features, first.features);
  EXPECT_TRUE(writes[1].repeat);  // the repeat's shadow score
  EXPECT_FALSE(writes[2].repeat);
  ASSERT_OK_AND_ASSIGN(StoredRecord record,
                       ledger->FindRecord("courier", "parcel-7"));
  ASSERT_EQ(record.scores.size(), 2u);
  EXPECT_EQ(record.scores[0].scored_at, first.scored_at);
  EXPECT_EQ(record.scores[1].scored_at, first.scored_at);
  EXPECT_THAT(Newest(*ledger),
              UnorderedElementsAre("parcel-8", "parcel-7", "parcel-7"));
}

// Guarantee: a record id scored before with other features refuses the
// whole call with ALREADY_EXISTS naming the id; nothing of the call is
// written.
TEST_P(LedgerContractTest, SameIdWithOtherFeaturesRefusesTheWholeCall) {
  Ledger* ledger = Open();
  ASSERT_NE(ledger, nullptr);
  Parcels parcels;
  const ScoreEntry stored = parcels.Score("parcel-11", 5, 0);
  ASSERT_OK(ledger->AppendScores({stored}));
  EXPECT_THAT(
      ledger->AppendScores({parcels.Score("parcel-12", 2, 10),
                            parcels.Score("parcel-11", 9.5, 10),
                            parcels.Score("parcel-13", 3, 10)}),
      StatusIs(absl::StatusCode::kAlreadyExists, HasSubstr("parcel-11")));
  EXPECT_THAT(ledger->FindRecord("courier", "parcel-12"),
              StatusIs(absl::StatusCode::kNotFound));
  EXPECT_THAT(ledger->FindRecord("courier", "parcel-13"),
              StatusIs(absl::StatusCode::kNotFound));
  ASSERT_OK_AND_ASSIGN(StoredRecord record,
                       ledger->FindRecord("courier", "parcel-11"));
  ASSERT_EQ(record.scores.size(), 1u);
  EXPECT_EQ(record.scores[0].features, stored.features);
  EXPECT_THAT(Newest(*ledger), ElementsAre("parcel-11"));
  // The ledger goes on taking writes.
  ASSERT_OK(ledger->AppendScores({parcels.Score("parcel-12", 2, 20)}));
  EXPECT_THAT(Newest(*ledger), ElementsAre("parcel-12", "parcel-11"));
}

// Guarantee: an empty record id is INVALID_ARGUMENT and the call writes
// nothing.
TEST_P(LedgerContractTest, EmptyRecordIdIsInvalidArgument) {
  Ledger* ledger = Open();
  ASSERT_NE(ledger, nullptr);
  Parcels parcels;
  EXPECT_THAT(ledger->AppendScores(
                  {parcels.Score("parcel-20", 4, 0), parcels.Score("", 4, 0)}),
              StatusIs(absl::StatusCode::kInvalidArgument));
  EXPECT_THAT(ledger->FindRecord("courier", "parcel-20"),
              StatusIs(absl::StatusCode::kNotFound));
  EXPECT_THAT(Newest(*ledger), IsEmpty());
}

// Guarantee: shadow-role scores share their record's id; the record holds
// them oldest first.
TEST_P(LedgerContractTest, ShadowScoresShareTheirRecordsId) {
  Ledger* ledger = Open();
  ASSERT_NE(ledger, nullptr);
  Parcels parcels;
  ASSERT_OK_AND_ASSIGN(
      std::vector<ScoreWrite> writes,
      ledger->AppendScores(
          {parcels.Score("parcel-30", 8, 0),
           parcels.Score("parcel-30", 8, 0, ScoreRole::kShadow, "v2"),
           parcels.Score("parcel-30", 8, 0, ScoreRole::kShadow, "v3")}));
  ASSERT_EQ(writes.size(), 3u);
  for (const ScoreWrite& w : writes) EXPECT_FALSE(w.repeat);
  ASSERT_OK_AND_ASSIGN(StoredRecord record,
                       ledger->FindRecord("courier", "parcel-30"));
  ASSERT_EQ(record.scores.size(), 3u);
  EXPECT_EQ(record.scores[0].set_version, "v1");
  EXPECT_EQ(record.scores[0].role, ScoreRole::kActive);
  EXPECT_EQ(record.scores[1].set_version, "v2");
  EXPECT_EQ(record.scores[1].role, ScoreRole::kShadow);
  EXPECT_EQ(record.scores[2].set_version, "v3");
  EXPECT_EQ(record.scores[2].role, ScoreRole::kShadow);
}

// Guarantee: a record id is unique per set only: two sets may score the
// same parcel, each keeping its own features; its outcome labels both.
TEST_P(LedgerContractTest, OneRecordIdInTwoSetsIsTwoRecords) {
  Ledger* ledger = Open();
  ASSERT_NE(ledger, nullptr);
  Parcels parcels;
  const ScoreEntry a = parcels.Score("parcel-40", 3, 0);
  const ScoreEntry b =
      parcels.Score("parcel-40", 12, 5, ScoreRole::kActive, "v1", "van_eta");
  ASSERT_OK(ledger->AppendScores({a}));
  ASSERT_OK_AND_ASSIGN(std::vector<ScoreWrite> writes,
                       ledger->AppendScores({b}));
  ASSERT_EQ(writes.size(), 1u);
  EXPECT_FALSE(writes[0].repeat);
  ASSERT_OK_AND_ASSIGN(StoredRecord in_a,
                       ledger->FindRecord("courier", "parcel-40"));
  ASSERT_OK_AND_ASSIGN(StoredRecord in_b,
                       ledger->FindRecord("van_eta", "parcel-40"));
  ASSERT_EQ(in_a.scores.size(), 1u);
  ASSERT_EQ(in_b.scores.size(), 1u);
  EXPECT_EQ(in_a.scores[0].features, a.features);
  EXPECT_EQ(in_b.scores[0].features, b.features);
  EXPECT_NE(a.features, b.features);
  ASSERT_OK_AND_ASSIGN(
      std::vector<OutcomeResult> results,
      ledger->ReportOutcomes({{"parcel-40", 1, parcels.At(100)}}));
  ASSERT_EQ(results.size(), 1u);
  ASSERT_OK(results[0].status);
  std::vector<std::string> sets;
  for (const LabelledScore& l : results[0].labelled) {
    sets.push_back(l.set_name);
  }
  EXPECT_THAT(sets, UnorderedElementsAre("courier", "van_eta"));
}

// ---- Outcomes --------------------------------------------------------------

// Guarantee: an outcome without a score is NOT_FOUND naming the id, and
// stores nothing.
TEST_P(LedgerContractTest, OutcomeWithoutAScoreIsNotFound) {
  Ledger* ledger = Open();
  ASSERT_NE(ledger, nullptr);
  Parcels parcels;
  ASSERT_OK(ledger->AppendScores({parcels.Score("parcel-50", 4, 0)}));
  ASSERT_OK_AND_ASSIGN(
      std::vector<OutcomeResult> results,
      ledger->ReportOutcomes({{"parcel-lost-in-depot", 1, parcels.At(60)}}));
  ASSERT_EQ(results.size(), 1u);
  EXPECT_THAT(results[0].status, StatusIs(absl::StatusCode::kNotFound,
                                          HasSubstr("parcel-lost-in-depot")));
  EXPECT_THAT(results[0].labelled, IsEmpty());
  EXPECT_THAT(NewestLabelled(*ledger), IsEmpty());
  ASSERT_OK_AND_ASSIGN(StoredRecord record,
                       ledger->FindRecord("courier", "parcel-50"));
  EXPECT_FALSE(record.has_outcome);
}

// Guarantee: a new outcome labels its record's active and shadow scores and
// says so in OutcomeResult.labelled.
TEST_P(LedgerContractTest, NewOutcomeLabelsTheActiveAndShadowScores) {
  Ledger* ledger = Open();
  ASSERT_NE(ledger, nullptr);
  Parcels parcels;
  const ScoreEntry active = parcels.Score("parcel-60", 7, 0);
  const ScoreEntry shadow =
      parcels.Score("parcel-60", 7, 0, ScoreRole::kShadow, "v2");
  ASSERT_OK(
      ledger->AppendScores({active, shadow, parcels.Score("parcel-61", 2, 1)}));
  ASSERT_OK_AND_ASSIGN(
      std::vector<OutcomeResult> results,
      ledger->ReportOutcomes({{"parcel-60", 1, parcels.At(300)}}));
  ASSERT_EQ(results.size(), 1u);
  ASSERT_OK(results[0].status);
  EXPECT_FALSE(results[0].repeat);
  ASSERT_EQ(results[0].labelled.size(), 2u);
  std::map<std::string, LabelledScore> by_version;
  for (const LabelledScore& l : results[0].labelled) {
    by_version[l.set_version] = l;
  }
  ASSERT_EQ(by_version.size(), 2u);
  const LabelledScore& v1 = by_version["v1"];
  const LabelledScore& v2 = by_version["v2"];
  EXPECT_EQ(v1.record_id, "parcel-60");
  EXPECT_EQ(v1.set_name, "courier");
  EXPECT_EQ(v1.role, ScoreRole::kActive);
  EXPECT_EQ(v1.label, 1);
  EXPECT_EQ(v1.log_odds, active.log_odds);
  EXPECT_EQ(v1.probability, active.probability);
  EXPECT_EQ(v1.scored_at, active.scored_at);
  EXPECT_EQ(v1.observed_at, parcels.At(300));
  EXPECT_EQ(v2.role, ScoreRole::kShadow);
  EXPECT_EQ(v2.label, 1);
  EXPECT_EQ(v2.log_odds, shadow.log_odds);
  ASSERT_OK_AND_ASSIGN(StoredRecord record,
                       ledger->FindRecord("courier", "parcel-60"));
  EXPECT_TRUE(record.has_outcome);
  EXPECT_EQ(record.label, 1);
  EXPECT_EQ(record.observed_at, parcels.At(300));
  ASSERT_OK_AND_ASSIGN(StoredRecord unlabelled,
                       ledger->FindRecord("courier", "parcel-61"));
  EXPECT_FALSE(unlabelled.has_outcome);
}

// Guarantee: one outcome per record id: the same label again is a repeat
// (nothing changes), another label is FAILED_PRECONDITION; across calls and
// within one call alike.
TEST_P(LedgerContractTest, OneOutcomePerRecordId) {
  Ledger* ledger = Open();
  ASSERT_NE(ledger, nullptr);
  Parcels parcels;
  ASSERT_OK(ledger->AppendScores({parcels.Score("parcel-70", 4, 0),
                                  parcels.Score("parcel-71", 5, 1),
                                  parcels.Score("parcel-72", 6, 2)}));
  ASSERT_OK(ledger->ReportOutcomes({{"parcel-70", 1, parcels.At(100)}}));
  ASSERT_OK_AND_ASSIGN(
      std::vector<OutcomeResult> again,
      ledger->ReportOutcomes({{"parcel-70", 1, parcels.At(200)},
                              {"parcel-70", 0, parcels.At(201)}}));
  ASSERT_EQ(again.size(), 2u);
  ASSERT_OK(again[0].status);
  EXPECT_TRUE(again[0].repeat);
  EXPECT_THAT(again[0].labelled, IsEmpty());
  EXPECT_THAT(again[1].status, StatusIs(absl::StatusCode::kFailedPrecondition));
  ASSERT_OK_AND_ASSIGN(StoredRecord record,
                       ledger->FindRecord("courier", "parcel-70"));
  EXPECT_EQ(record.label, 1);
  EXPECT_EQ(record.observed_at, parcels.At(100));

  // One call naming a record twice: the second is judged against the first.
  ASSERT_OK_AND_ASSIGN(
      std::vector<OutcomeResult> twice,
      ledger->ReportOutcomes({{"parcel-71", 0, parcels.At(300)},
                              {"parcel-71", 0, parcels.At(301)},
                              {"parcel-72", 1, parcels.At(302)},
                              {"parcel-72", 0, parcels.At(303)}}));
  ASSERT_EQ(twice.size(), 4u);
  ASSERT_OK(twice[0].status);
  EXPECT_FALSE(twice[0].repeat);
  EXPECT_EQ(twice[0].labelled.size(), 1u);
  ASSERT_OK(twice[1].status);
  EXPECT_TRUE(twice[1].repeat);
  EXPECT_THAT(twice[1].labelled, IsEmpty());
  ASSERT_OK(twice[2].status);
  EXPECT_EQ(twice[2].labelled.size(), 1u);
  EXPECT_THAT(twice[3].status, StatusIs(absl::StatusCode::kFailedPrecondition));
  ASSERT_OK_AND_ASSIGN(StoredRecord r71,
                       ledger->FindRecord("courier", "parcel-71"));
  EXPECT_EQ(r71.label, 0);
  EXPECT_EQ(r71.observed_at, parcels.At(300));
  ASSERT_OK_AND_ASSIGN(StoredRecord r72,
                       ledger->FindRecord("courier", "parcel-72"));
  EXPECT_EQ(r72.label, 1);
  // Each record labelled once.
  EXPECT_THAT(NewestLabelled(*ledger),
              ElementsAre("parcel-72", "parcel-71", "parcel-70"));
}

// Guarantee: a label other than 0/1 or an empty record id is
// INVALID_ARGUMENT for that outcome alone; the rest of the call goes on.
TEST_P(LedgerContractTest, BadOutcomesAreInvalidArgumentOneByOne) {
  Ledger* ledger = Open();
  ASSERT_NE(ledger, nullptr);
  Parcels parcels;
  ASSERT_OK(ledger->AppendScores({parcels.Score("parcel-80", 4, 0)}));
  ASSERT_OK_AND_ASSIGN(
      std::vector<OutcomeResult> results,
      ledger->ReportOutcomes({{"parcel-80", 2, parcels.At(9)},
                              {"", 1, parcels.At(9)},
                              {"parcel-80", 0, parcels.At(9)}}));
  ASSERT_EQ(results.size(), 3u);
  EXPECT_THAT(results[0].status, StatusIs(absl::StatusCode::kInvalidArgument));
  EXPECT_THAT(results[1].status, StatusIs(absl::StatusCode::kInvalidArgument));
  ASSERT_OK(results[2].status);
  EXPECT_FALSE(results[2].repeat);
  EXPECT_EQ(results[2].labelled.size(), 1u);
  ASSERT_OK_AND_ASSIGN(StoredRecord record,
                       ledger->FindRecord("courier", "parcel-80"));
  EXPECT_EQ(record.label, 0);
}

// Guarantee: ForEachLabelled gives labelled scores newest outcome first (by
// observed time, not by score or report order), with limit and since, and
// their features as stored.
TEST_P(LedgerContractTest, LabelledReadsAreNewestObservedFirst) {
  Ledger* ledger = Open();
  ASSERT_NE(ledger, nullptr);
  Parcels parcels;
  std::vector<ScoreEntry> scores;
  for (int i = 0; i < 6; ++i) {
    scores.push_back(parcels.Score(absl::StrCat("parcel-9", i), 2 + i, i));
  }
  ASSERT_OK(ledger->AppendScores(scores));
  // Observed seconds: parcel-90 1050, -91 1010, -92 1040, -93 1020, -94
  // 1030; parcel-95 gets none.
  ASSERT_OK_AND_ASSIGN(
      std::vector<OutcomeResult> results,
      ledger->ReportOutcomes({{"parcel-91", 0, parcels.At(1010)},
                              {"parcel-90", 1, parcels.At(1050)},
                              {"parcel-93", 1, parcels.At(1020)},
                              {"parcel-92", 0, parcels.At(1040)},
                              {"parcel-94", 1, parcels.At(1030)}}));
  for (const OutcomeResult& r : results) ASSERT_OK(r.status);
  EXPECT_THAT(NewestLabelled(*ledger),
              ElementsAre("parcel-90", "parcel-92", "parcel-94", "parcel-93",
                          "parcel-91"));
  EXPECT_THAT(NewestLabelled(*ledger, 2),
              ElementsAre("parcel-90", "parcel-92"));
  EXPECT_THAT(NewestLabelled(*ledger, 1000, parcels.At(1030)),
              ElementsAre("parcel-90", "parcel-92", "parcel-94"));
  std::vector<LabelledScore> newest;
  ASSERT_OK(ledger->ForEachLabelled(
      "courier", 1, absl::InfinitePast(),
      [&](const LabelledScore& l) { newest.push_back(l); }));
  ASSERT_EQ(newest.size(), 1u);
  EXPECT_EQ(newest[0].label, 1);
  EXPECT_EQ(newest[0].observed_at, parcels.At(1050));
  EXPECT_EQ(newest[0].features, scores[0].features);
  EXPECT_EQ(newest[0].log_odds, scores[0].log_odds);
  ASSERT_NE(newest[0].layout, nullptr);
  EXPECT_EQ(newest[0].layout->SerializeAsString(),
            scores[0].layout->SerializeAsString());
}

// ---- Marks and the committed-rows feed -------------------------------------

// Guarantee: the rows observer gets every committed score exactly once in
// id order and the scores each new outcome labels in outcome order (not
// repeats, refused calls or outcomes that label nothing); marks strictly
// grow and Marks() is the last marks it saw; ForEachScoreAfter and
// ForEachLabelledAfter give the same rows in the same order.
TEST_P(LedgerContractTest, ObserverGetsEveryCommittedRowOnceInOrder) {
  Ledger* ledger = Open();
  ASSERT_NE(ledger, nullptr);
  auto heard = std::make_shared<Listener>();
  keep_.push_back(heard);
  heard->Attach(*ledger);
  Parcels parcels;
  ASSERT_OK(ledger->AppendScores(
      {parcels.Score("parcel-100", 3, 0), parcels.Score("parcel-101", 4, 1),
       parcels.Score("parcel-100", 3, 0, ScoreRole::kShadow, "v2")}));
  ASSERT_OK(ledger->AppendScores({parcels.Score("parcel-102", 5, 2)}));
  // A retry and a conflict: nothing written, nothing heard.
  ASSERT_OK(ledger->AppendScores({parcels.Score("parcel-100", 3, 9)}));
  EXPECT_THAT(ledger->AppendScores({parcels.Score("parcel-103", 1, 9),
                                    parcels.Score("parcel-101", 40, 9)}),
              StatusIs(absl::StatusCode::kAlreadyExists));
  ASSERT_OK_AND_ASSIGN(
      std::vector<OutcomeResult> results,
      ledger->ReportOutcomes({{"parcel-101", 0, parcels.At(100)},
                              {"parcel-100", 1, parcels.At(101)},
                              {"parcel-100", 1, parcels.At(102)},  // repeat
                              {"parcel-999", 1, parcels.At(103)}}));
  ASSERT_EQ(results.size(), 4u);
  EXPECT_THAT(results[3].status, StatusIs(absl::StatusCode::kNotFound));
  ASSERT_OK(ledger->ReportOutcomes({{"parcel-102", 1, parcels.At(104)}}));
  ASSERT_OK(ledger->Flush());

  const std::vector<std::string> want_scores = {
      "parcel-100/v1", "parcel-101/v1", "parcel-100/v2", "parcel-102/v1"};
  const std::vector<std::string> want_labelled = {
      "parcel-101/v1/0", "parcel-100/v1/1", "parcel-100/v2/1",
      "parcel-102/v1/1"};
  EXPECT_EQ(heard->scores(), want_scores);
  EXPECT_EQ(heard->labelled(), want_labelled);
  // A group's score mark grows when it wrote scores and stays otherwise;
  // its outcome mark likewise with the scores its outcomes label. (A group
  // with no rows, e.g. only a retry, may be told or not.)
  const std::vector<Listener::Group> groups = heard->groups();
  ASSERT_FALSE(groups.empty());
  LedgerMarks before;
  for (size_t i = 0; i < groups.size(); ++i) {
    const Listener::Group& g = groups[i];
    if (g.scores > 0) {
      EXPECT_GT(g.marks.score_id, before.score_id) << "group " << i;
    } else {
      EXPECT_EQ(g.marks.score_id, before.score_id) << "group " << i;
    }
    if (g.labelled > 0) {
      EXPECT_GT(g.marks.outcome_seq, before.outcome_seq) << "group " << i;
    } else {
      EXPECT_EQ(g.marks.outcome_seq, before.outcome_seq) << "group " << i;
    }
    before = g.marks;
  }
  EXPECT_EQ(ledger->Marks(), before);
  EXPECT_EQ(ScoresAfter(*ledger, 0), want_scores);
  EXPECT_EQ(LabelledAfter(*ledger, 0), want_labelled);
  EXPECT_THAT(ScoresAfter(*ledger, before.score_id), IsEmpty());
  EXPECT_THAT(LabelledAfter(*ledger, before.outcome_seq), IsEmpty());
}

// Guarantee: a pair of marks splits the ledger exactly: the reads after a
// mark and up to the next give the rows committed between them, RecordsAt
// names the last score and outcome, and the windowed reads with `upto`
// stop there.
TEST_P(LedgerContractTest, MarksSplitTheRowsExactly) {
  Ledger* ledger = Open();
  ASSERT_NE(ledger, nullptr);
  auto heard = std::make_shared<Listener>();
  keep_.push_back(heard);
  heard->Attach(*ledger);
  Parcels parcels;
  ASSERT_OK(ledger->AppendScores(
      {parcels.Score("parcel-110", 3, 0), parcels.Score("parcel-111", 4, 1)}));
  ASSERT_OK(ledger->ReportOutcomes({{"parcel-110", 1, parcels.At(100)}}));
  ASSERT_OK(ledger->Flush());
  const LedgerMarks m1 = ledger->Marks();
  ASSERT_OK(ledger->AppendScores(
      {parcels.Score("parcel-112", 5, 2), parcels.Score("parcel-113", 6, 3)}));
  ASSERT_OK(ledger->ReportOutcomes({{"parcel-111", 0, parcels.At(101)},
                                    {"parcel-112", 1, parcels.At(102)}}));
  ASSERT_OK(ledger->Flush());
  const LedgerMarks m2 = ledger->Marks();
  ASSERT_OK(ledger->AppendScores({parcels.Score("parcel-114", 7, 4)}));
  ASSERT_OK(ledger->ReportOutcomes({{"parcel-113", 0, parcels.At(103)}}));
  ASSERT_OK(ledger->Flush());
  const LedgerMarks m3 = ledger->Marks();
  EXPECT_LT(0, m1.score_id);
  EXPECT_LT(m1.score_id, m2.score_id);
  EXPECT_LT(m2.score_id, m3.score_id);
  EXPECT_LT(0, m1.outcome_seq);
  EXPECT_LT(m1.outcome_seq, m2.outcome_seq);
  EXPECT_LT(m2.outcome_seq, m3.outcome_seq);
  ASSERT_FALSE(heard->groups().empty());
  EXPECT_EQ(heard->groups().back().marks, m3);

  EXPECT_THAT(ScoresAfter(*ledger, 0, m1.score_id),
              ElementsAre("parcel-110/v1", "parcel-111/v1"));
  EXPECT_THAT(ScoresAfter(*ledger, m1.score_id, m2.score_id),
              ElementsAre("parcel-112/v1", "parcel-113/v1"));
  EXPECT_THAT(ScoresAfter(*ledger, m2.score_id, m3.score_id),
              ElementsAre("parcel-114/v1"));
  EXPECT_THAT(LabelledAfter(*ledger, 0, m1.outcome_seq),
              ElementsAre("parcel-110/v1/1"));
  EXPECT_THAT(LabelledAfter(*ledger, m1.outcome_seq, m2.outcome_seq),
              ElementsAre("parcel-111/v1/0", "parcel-112/v1/1"));
  EXPECT_THAT(LabelledAfter(*ledger, m2.outcome_seq, m3.outcome_seq),
              ElementsAre("parcel-113/v1/0"));

  ASSERT_OK_AND_ASSIGN(MarkRecords at2, ledger->RecordsAt(m2));
  EXPECT_EQ(at2.score_record, "parcel-113");
  EXPECT_EQ(at2.outcome_record, "parcel-112");
  ASSERT_OK_AND_ASSIGN(MarkRecords at1, ledger->RecordsAt(m1));
  EXPECT_EQ(at1.score_record, "parcel-111");
  EXPECT_EQ(at1.outcome_record, "parcel-110");
  ASSERT_OK_AND_ASSIGN(
      MarkRecords beyond,
      ledger->RecordsAt({m3.score_id + 1000, m3.outcome_seq + 1000}));
  EXPECT_EQ(beyond.score_record, "");
  EXPECT_EQ(beyond.outcome_record, "");

  EXPECT_THAT(
      Newest(*ledger, 1000, absl::InfinitePast(), &m2),
      ElementsAre("parcel-113", "parcel-112", "parcel-111", "parcel-110"));
  EXPECT_THAT(NewestLabelled(*ledger, 1000, absl::InfinitePast(), &m2),
              ElementsAre("parcel-112", "parcel-111", "parcel-110"));
  EXPECT_THAT(NewestLabelled(*ledger, 1000, absl::InfinitePast(), &m1),
              ElementsAre("parcel-110"));
}

// ---- Concurrency -----------------------------------------------------------

// Guarantee: calls from many threads at once lose and double nothing: every
// acknowledged score and outcome is stored exactly once, heard once, and
// counted in stats().committed_rows.
TEST_P(LedgerContractTest, ManyThreadsOfDistinctRecordsAreEachStoredOnce) {
  constexpr int kThreads = 8;
  constexpr int kCalls = 40;
  constexpr int kPerCall = 3;
  Ledger* ledger = Open();
  ASSERT_NE(ledger, nullptr);
  auto heard = std::make_shared<Listener>();
  keep_.push_back(heard);
  heard->Attach(*ledger);
  Parcels parcels;
  std::atomic<int> failed_calls{0};
  std::atomic<int> outcomes_ok{0};
  OnThreads(kThreads, [&](int t) {
    for (int c = 0; c < kCalls; ++c) {
      std::vector<ScoreEntry> scores;
      for (int k = 0; k < kPerCall; ++k) {
        scores.push_back(parcels.Score(
            absl::StrCat("parcel-t", t, "-", c, "-", k), 1 + k, c));
      }
      if (!ledger->AppendScores(std::move(scores)).ok()) ++failed_calls;
      if (c % 4 == 3) {
        // Courier t delivered the first parcel of call c - 1.
        auto r = ledger->ReportOutcomes(
            {{absl::StrCat("parcel-t", t, "-", c - 1, "-0"), c % 2,
              parcels.At(500 + c)}});
        if (r.ok() && r->size() == 1 && (*r)[0].status.ok() &&
            !(*r)[0].repeat && (*r)[0].labelled.size() == 1) {
          ++outcomes_ok;
        } else {
          ++failed_calls;
        }
      }
    }
  });
  ASSERT_EQ(failed_calls.load(), 0);
  ASSERT_OK(ledger->Flush());
  constexpr int kScores = kThreads * kCalls * kPerCall;  // 960
  constexpr int kOutcomes = kThreads * (kCalls / 4);     // 80
  EXPECT_EQ(outcomes_ok.load(), kOutcomes);

  std::vector<std::string> want;
  for (int t = 0; t < kThreads; ++t) {
    for (int c = 0; c < kCalls; ++c) {
      for (int k = 0; k < kPerCall; ++k) {
        want.push_back(absl::StrCat("parcel-t", t, "-", c, "-", k, "/v1"));
      }
    }
  }
  std::sort(want.begin(), want.end());
  std::vector<std::string> stored = ScoresAfter(*ledger, 0);
  std::vector<std::string> got_heard = heard->scores();
  EXPECT_EQ(stored, got_heard);  // same rows, same (id) order
  std::sort(stored.begin(), stored.end());
  std::sort(got_heard.begin(), got_heard.end());
  EXPECT_EQ(stored, want);
  EXPECT_EQ(got_heard, want);
  EXPECT_EQ(LabelledAfter(*ledger, 0).size(), static_cast<size_t>(kOutcomes));
  EXPECT_EQ(heard->labelled().size(), static_cast<size_t>(kOutcomes));
  // Every row of every call was new, so committed rows are all of them.
  EXPECT_EQ(ledger->stats().committed_rows, kScores + kOutcomes);
  EXPECT_EQ(ledger->stats().repeated_records, 0);
  EXPECT_EQ(ledger->stats().conflicting_records, 0);
}

// Guarantee: one record id sent by 8 threads at once with the same
// features is written once; the other 7 are repeats of it.
TEST_P(LedgerContractTest, SameRecordFromManyThreadsIsWrittenOnce) {
  constexpr int kThreads = 8;
  Ledger* ledger = Open();
  ASSERT_NE(ledger, nullptr);
  Parcels parcels;
  const ScoreEntry entry = parcels.Score("parcel-rush", 9, 0);
  std::atomic<int> written{0}, repeats{0}, errors{0};
  OnThreads(kThreads, [&](int) {
    absl::StatusOr<std::vector<ScoreWrite>> w = ledger->AppendScores({entry});
    if (!w.ok() || w->size() != 1) {
      ++errors;
    } else if ((*w)[0].repeat) {
      ++repeats;
      if ((*w)[0].stored.features != entry.features) ++errors;
    } else {
      ++written;
    }
  });
  EXPECT_EQ(errors.load(), 0);
  EXPECT_EQ(written.load(), 1);
  EXPECT_EQ(repeats.load(), kThreads - 1);
  ASSERT_OK_AND_ASSIGN(StoredRecord record,
                       ledger->FindRecord("courier", "parcel-rush"));
  EXPECT_EQ(record.scores.size(), 1u);
  EXPECT_EQ(ledger->stats().repeated_records, kThreads - 1);
}

// Guarantee: one record id sent by 8 threads at once with 8 different
// feature rows: exactly one call is OK and stored, the others are
// ALREADY_EXISTS.
TEST_P(LedgerContractTest, SameRecordWithOtherFeaturesFromManyThreadsOneWins) {
  constexpr int kThreads = 8;
  Ledger* ledger = Open();
  ASSERT_NE(ledger, nullptr);
  Parcels parcels;
  std::vector<ScoreEntry> entries;
  for (int t = 0; t < kThreads; ++t) {
    entries.push_back(parcels.Score("parcel-contested", 1 + t, 0));
  }
  std::atomic<int> ok{0}, exists{0}, other{0};
  std::atomic<int> winner{-1};
  OnThreads(kThreads, [&](int t) {
    absl::StatusOr<std::vector<ScoreWrite>> w =
        ledger->AppendScores({entries[static_cast<size_t>(t)]});
    if (w.ok() && w->size() == 1 && !(*w)[0].repeat) {
      ++ok;
      winner = t;
    } else if (w.status().code() == absl::StatusCode::kAlreadyExists) {
      ++exists;
    } else {
      ++other;
    }
  });
  EXPECT_EQ(ok.load(), 1);
  EXPECT_EQ(exists.load(), kThreads - 1);
  EXPECT_EQ(other.load(), 0);
  ASSERT_GE(winner.load(), 0);
  ASSERT_OK_AND_ASSIGN(StoredRecord record,
                       ledger->FindRecord("courier", "parcel-contested"));
  ASSERT_EQ(record.scores.size(), 1u);
  EXPECT_EQ(record.scores[0].features,
            entries[static_cast<size_t>(winner.load())].features);
  EXPECT_EQ(ledger->stats().conflicting_records, kThreads - 1);
}

// ---- Stats -----------------------------------------------------------------

// Guarantee: stats count the retried scores (repeated_records, one per
// score) and the refused calls (conflicting_records, one per call).
TEST_P(LedgerContractTest, StatsCountRepeatsAndConflicts) {
  Ledger* ledger = Open();
  ASSERT_NE(ledger, nullptr);
  Parcels parcels;
  ASSERT_OK(ledger->AppendScores(
      {parcels.Score("parcel-120", 3, 0), parcels.Score("parcel-121", 4, 0)}));
  EXPECT_EQ(ledger->stats().repeated_records, 0);
  EXPECT_EQ(ledger->stats().conflicting_records, 0);
  ASSERT_OK(ledger->AppendScores({parcels.Score("parcel-120", 3, 5)}));
  ASSERT_OK(ledger->AppendScores({parcels.Score("parcel-120", 3, 6),
                                  parcels.Score("parcel-121", 4, 6),
                                  parcels.Score("parcel-122", 5, 6)}));
  EXPECT_EQ(ledger->stats().repeated_records, 3);
  EXPECT_THAT(ledger->AppendScores({parcels.Score("parcel-121", 30, 7)}),
              StatusIs(absl::StatusCode::kAlreadyExists));
  EXPECT_THAT(ledger->AppendScores({parcels.Score("parcel-123", 5, 8),
                                    parcels.Score("parcel-120", 31, 8)}),
              StatusIs(absl::StatusCode::kAlreadyExists));
  const LedgerStats stats = ledger->stats();
  EXPECT_EQ(stats.repeated_records, 3);
  EXPECT_EQ(stats.conflicting_records, 2);
  EXPECT_FALSE(stats.failed);
  EXPECT_THAT(Newest(*ledger),
              UnorderedElementsAre("parcel-120", "parcel-121", "parcel-122"));
}

// ---- Two replicas on one store (shared backends only) ----------------------

// Guarantee: replicas share the rows: a score through A is found through
// B, an outcome through B labels A's score, and B's rows observer gets A's
// rows too, in id order.
TEST_P(LedgerContractTest, TwoReplicasShareTheirRows) {
  if (!GetParam().shared) {
    GTEST_SKIP() << GetParam().name << " takes one writer per store";
  }
  Ledger* a = Open();
  ASSERT_NE(a, nullptr);
  Ledger* b = Open();
  ASSERT_NE(b, nullptr);
  auto heard = std::make_shared<Listener>();
  keep_.push_back(heard);
  heard->Attach(*b);
  Parcels parcels;
  const ScoreEntry through_a = parcels.Score("parcel-200", 6, 0);
  ASSERT_OK(a->AppendScores({through_a}));
  ASSERT_OK_AND_ASSIGN(StoredRecord found,
                       b->FindRecord("courier", "parcel-200"));
  ASSERT_EQ(found.scores.size(), 1u);
  EXPECT_EQ(found.scores[0].features, through_a.features);
  EXPECT_EQ(found.scores[0].log_odds, through_a.log_odds);

  ASSERT_OK_AND_ASSIGN(std::vector<OutcomeResult> results,
                       b->ReportOutcomes({{"parcel-200", 1, parcels.At(100)}}));
  ASSERT_EQ(results.size(), 1u);
  ASSERT_OK(results[0].status);
  EXPECT_FALSE(results[0].repeat);
  ASSERT_EQ(results[0].labelled.size(), 1u);
  EXPECT_EQ(results[0].labelled[0].log_odds, through_a.log_odds);
  ASSERT_OK_AND_ASSIGN(StoredRecord labelled,
                       a->FindRecord("courier", "parcel-200"));
  EXPECT_TRUE(labelled.has_outcome);
  EXPECT_EQ(labelled.label, 1);

  ASSERT_OK(b->AppendScores({parcels.Score("parcel-201", 7, 1)}));
  ASSERT_OK(a->AppendScores({parcels.Score("parcel-202", 8, 2)}));
  ASSERT_OK(b->Flush());
  // A's last score reaches B's feed eventually (its follower).
  EXPECT_TRUE(PollUntil([&] { return heard->scores().size() >= 3; }))
      << "B's observer heard " << heard->scores().size() << " of 3 scores";
  EXPECT_THAT(heard->scores(),
              ElementsAre("parcel-200/v1", "parcel-201/v1", "parcel-202/v1"));
  EXPECT_THAT(heard->labelled(), ElementsAre("parcel-200/v1/1"));
  EXPECT_THAT(ScoresAfter(*a, 0),
              ElementsAre("parcel-200/v1", "parcel-201/v1", "parcel-202/v1"));
}

// Guarantee: one record id through two replicas at once is written once:
// with the same features the other call is a repeat, with other features
// ALREADY_EXISTS.
TEST_P(LedgerContractTest, SameRecordThroughTwoReplicasIsWrittenOnce) {
  if (!GetParam().shared) {
    GTEST_SKIP() << GetParam().name << " takes one writer per store";
  }
  Ledger* a = Open();
  ASSERT_NE(a, nullptr);
  Ledger* b = Open();
  ASSERT_NE(b, nullptr);
  Ledger* replicas[] = {a, b};
  Parcels parcels;
  const ScoreEntry same = parcels.Score("parcel-210", 5, 0);
  std::atomic<int> written{0}, repeats{0}, errors{0};
  OnThreads(2, [&](int r) {
    auto w = replicas[r]->AppendScores({same});
    if (!w.ok() || w->size() != 1) {
      ++errors;
    } else if ((*w)[0].repeat) {
      ++repeats;
    } else {
      ++written;
    }
  });
  EXPECT_EQ(errors.load(), 0);
  EXPECT_EQ(written.load(), 1);
  EXPECT_EQ(repeats.load(), 1);

  const ScoreEntry other[] = {parcels.Score("parcel-211", 5, 1),
                              parcels.Score("parcel-211", 15, 1)};
  std::atomic<int> ok{0}, exists{0}, failed{0};
  OnThreads(2, [&](int r) {
    auto w = replicas[r]->AppendScores({other[r]});
    if (w.ok() && w->size() == 1 && !(*w)[0].repeat) {
      ++ok;
    } else if (w.status().code() == absl::StatusCode::kAlreadyExists) {
      ++exists;
    } else {
      ++failed;
    }
  });
  EXPECT_EQ(ok.load(), 1);
  EXPECT_EQ(exists.load(), 1);
  EXPECT_EQ(failed.load(), 0);
  for (Ledger* replica : replicas) {
    ASSERT_OK_AND_ASSIGN(StoredRecord r210,
                         replica->FindRecord("courier", "parcel-210"));
    EXPECT_EQ(r210.scores.size(), 1u);
    ASSERT_OK_AND_ASSIGN(StoredRecord r211,
                         replica->FindRecord("courier", "parcel-211"));
    EXPECT_EQ(r211.scores.size(), 1u);
  }
}

}  // namespace
}  // namespace plumbline::daemon::testing
