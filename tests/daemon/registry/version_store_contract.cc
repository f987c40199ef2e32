// File: tests/daemon/registry/version_store_contract.cc
//
// The version store contract (version_store_contract.h): the behaviours the
// lifecycle relies on, on courier-delivery sets.
#include "tests/daemon/registry/version_store_contract.h"

#include <algorithm>
#include <optional>
#include <string>
#include <vector>

#include "absl/status/status.h"
#include "absl/time/time.h"
#include "gmock/gmock.h"
#include "tests/testing/status_matchers.h"

namespace plumbline::daemon {

using ::plumbline::testing::StatusIs;
using ::testing::ElementsAre;

std::string VersionStoreBackendName(
    const ::testing::TestParamInfo<VersionStoreBackend>& info) {
  return info.param.name;
}

void VersionStoreContractTest::SetUp() {
  absl::StatusOr<std::unique_ptr<VersionStore>> store = GetParam().open(keep_);
  ASSERT_OK(store.status());
  store_ = *std::move(store);
}

void VersionStoreContractTest::TearDown() {
  store_.reset();
  keep_.reset();
}

namespace {

// 2026-12-03 08:15:00.123456 UTC plus `minutes`: microseconds must survive.
absl::Time At(int minutes) {
  return absl::FromUnixMicros(1796372100123456) + absl::Minutes(minutes);
}

VersionRecord Version(const std::string& set, const std::string& version,
                      VersionState state, absl::Time created_at) {
  VersionRecord r;
  r.set = set;
  r.version = version;
  r.state = state;
  r.created_at = created_at;
  r.created_by = "plumbctl load by dispatch-lead";
  r.reason = "depot 7's \"late van\" routes\tre-weighted; it's reviewed";
  r.comparison = "holdout log-loss 0.412 vs 0.431 (n=18 204)";
  r.source = "";
  r.document = R"({"name":")" + set + R"(","version":")" + version + R"("})";
  return r;
}

std::vector<std::string> Names(const std::vector<VersionRecord>& records) {
  std::vector<std::string> out;
  for (const VersionRecord& r : records) out.push_back(r.set + "/" + r.version);
  return out;
}

TEST_P(VersionStoreContractTest, InsertedVersionReadsBackExactly) {
  VersionRecord r =
      Version("courier_first_attempt", "r7", VersionState::kCandidate, At(0));
  r.source = "sets/courier_first_attempt.json";
  ASSERT_OK(store_->Insert(r));
  ASSERT_OK_AND_ASSIGN(std::optional<VersionRecord> got,
                       store_->Get("courier_first_attempt", "r7"));
  ASSERT_TRUE(got.has_value());
  EXPECT_EQ(got->set, r.set);
  EXPECT_EQ(got->version, r.version);
  EXPECT_EQ(got->state, VersionState::kCandidate);
  EXPECT_EQ(got->created_at, r.created_at);
  EXPECT_EQ(got->created_by, r.created_by);
  EXPECT_EQ(got->reason, r.reason);
  EXPECT_EQ(got->comparison, r.comparison);
  EXPECT_EQ(got->source, r.source);
  EXPECT_EQ(got->document, r.document);
}

TEST_P(VersionStoreContractTest, UnknownVersionIsNotAnError) {
  ASSERT_OK_AND_ASSIGN(std::optional<VersionRecord> got,
                       store_->Get("courier_first_attempt", "r1"));
  EXPECT_FALSE(got.has_value());
  ASSERT_OK_AND_ASSIGN(std::optional<VersionRecord> active,
                       store_->Active("courier_first_attempt"));
  EXPECT_FALSE(active.has_value());
  ASSERT_OK_AND_ASSIGN(std::vector<VersionRecord> all, store_->List(""));
  EXPECT_TRUE(all.empty());
}

TEST_P(VersionStoreContractTest, VersionsAreImmutable) {
  ASSERT_OK(store_->Insert(
      Version("courier", "r1", VersionState::kCandidate, At(0))));
  EXPECT_THAT(
      store_->Insert(Version("courier", "r1", VersionState::kActive, At(5))),
      StatusIs(absl::StatusCode::kAlreadyExists));
  ASSERT_OK_AND_ASSIGN(std::optional<VersionRecord> got,
                       store_->Get("courier", "r1"));
  ASSERT_TRUE(got.has_value());
  EXPECT_EQ(got->state, VersionState::kCandidate);
  // The same version name in another set is another version.
  EXPECT_OK(store_->Insert(
      Version("parcel_damage", "r1", VersionState::kCandidate, At(0))));
}

TEST_P(VersionStoreContractTest, ListIsBySetThenNewestFirst) {
  ASSERT_OK(store_->Insert(
      Version("parcel_damage", "d1", VersionState::kActive, At(0))));
  ASSERT_OK(
      store_->Insert(Version("courier", "r1", VersionState::kRetired, At(0))));
  ASSERT_OK(
      store_->Insert(Version("courier", "r3", VersionState::kActive, At(20))));
  ASSERT_OK(store_->Insert(
      Version("courier", "r2", VersionState::kCandidate, At(10))));
  // Same time: the larger version name first (byte order: "R" < "r").
  ASSERT_OK(
      store_->Insert(Version("courier", "R9", VersionState::kShadow, At(10))));

  ASSERT_OK_AND_ASSIGN(std::vector<VersionRecord> courier,
                       store_->List("courier"));
  EXPECT_THAT(Names(courier), ElementsAre("courier/r3", "courier/r2",
                                          "courier/R9", "courier/r1"));
  ASSERT_OK_AND_ASSIGN(std::vector<VersionRecord> all, store_->List(""));
  EXPECT_THAT(Names(all), ElementsAre("courier/r3", "courier/r2", "courier/R9",
                                      "courier/r1", "parcel_damage/d1"));
}

TEST_P(VersionStoreContractTest, SetStateMovesOneVersion) {
  ASSERT_OK(store_->Insert(
      Version("courier", "r1", VersionState::kCandidate, At(0))));
  ASSERT_OK(store_->SetState("courier", "r1", VersionState::kShadow));
  ASSERT_OK_AND_ASSIGN(std::optional<VersionRecord> got,
                       store_->Get("courier", "r1"));
  ASSERT_TRUE(got.has_value());
  EXPECT_EQ(got->state, VersionState::kShadow);
  EXPECT_THAT(store_->SetState("courier", "r2", VersionState::kActive),
              StatusIs(absl::StatusCode::kNotFound));
  EXPECT_THAT(store_->SetState("parcel_damage", "r1", VersionState::kActive),
              StatusIs(absl::StatusCode::kNotFound));
}

TEST_P(VersionStoreContractTest, OneActiveVersionPerSet) {
  ASSERT_OK(
      store_->Insert(Version("courier", "r1", VersionState::kActive, At(0))));
  ASSERT_OK(store_->Insert(
      Version("courier", "r2", VersionState::kCandidate, At(1))));
  ASSERT_OK(store_->Insert(
      Version("parcel_damage", "d1", VersionState::kActive, At(0))));
  EXPECT_FALSE(store_->SetState("courier", "r2", VersionState::kActive).ok());
  EXPECT_FALSE(
      store_->Insert(Version("courier", "r3", VersionState::kActive, At(2)))
          .ok());
  ASSERT_OK_AND_ASSIGN(std::optional<VersionRecord> active,
                       store_->Active("courier"));
  ASSERT_TRUE(active.has_value());
  EXPECT_EQ(active->version, "r1");

  // Retire first, then activate: the lifecycle's order.
  ASSERT_OK(store_->SetState("courier", "r1", VersionState::kRetired));
  ASSERT_OK(store_->SetState("courier", "r2", VersionState::kActive));
  ASSERT_OK_AND_ASSIGN(active, store_->Active("courier"));
  ASSERT_TRUE(active.has_value());
  EXPECT_EQ(active->version, "r2");
}

TEST_P(VersionStoreContractTest, PreviousActiveSkipsTheCurrentVersion) {
  ASSERT_OK(store_->RecordActivation("courier", "r1", At(0)));
  ASSERT_OK(store_->RecordActivation("parcel_damage", "d1", At(1)));
  ASSERT_OK(store_->RecordActivation("courier", "r2", At(2)));
  ASSERT_OK(store_->RecordActivation("courier", "r3", At(3)));
  // r1 again, after a rollback through r2.
  ASSERT_OK(store_->RecordActivation("courier", "r1", At(4)));

  ASSERT_OK_AND_ASSIGN(std::optional<std::string> before_r1,
                       store_->PreviousActive("courier", "r1"));
  EXPECT_EQ(before_r1, "r3");
  ASSERT_OK_AND_ASSIGN(std::optional<std::string> before_r3,
                       store_->PreviousActive("courier", "r3"));
  EXPECT_EQ(before_r3, "r2");
  ASSERT_OK_AND_ASSIGN(std::optional<std::string> before_d1,
                       store_->PreviousActive("parcel_damage", "d1"));
  EXPECT_EQ(before_d1, std::nullopt);
  ASSERT_OK_AND_ASSIGN(std::optional<std::string> never,
                       store_->PreviousActive("courier", "r9"));
  EXPECT_EQ(never, std::nullopt);
}

TEST_P(VersionStoreContractTest, AuditIsPerSetOldestFirst) {
  ASSERT_OK(store_->AppendAudit({At(5), "courier", "r2", "loaded",
                                 "refit job 3 (drift)", "as candidate"}));
  ASSERT_OK(store_->AppendAudit(
      {At(0), "parcel_damage", "d1", "loaded", "sets directory", ""}));
  // Recorded later with an earlier time: still after, the audit is in the
  // order it was written.
  ASSERT_OK(store_->AppendAudit({At(1), "courier", "r2", "approved",
                                 "plumbctl approve by alice",
                                 "depot 7's \"late van\" review\tdone"}));

  ASSERT_OK_AND_ASSIGN(std::vector<AuditRecord> audit,
                       store_->Audit("courier"));
  ASSERT_EQ(audit.size(), 2u);
  EXPECT_EQ(audit[0].action, "loaded");
  EXPECT_EQ(audit[0].at, At(5));
  EXPECT_EQ(audit[0].actor, "refit job 3 (drift)");
  EXPECT_EQ(audit[1].at, At(1));
  EXPECT_EQ(audit[1].set, "courier");
  EXPECT_EQ(audit[1].version, "r2");
  EXPECT_EQ(audit[1].action, "approved");
  EXPECT_EQ(audit[1].actor, "plumbctl approve by alice");
  EXPECT_EQ(audit[1].detail, "depot 7's \"late van\" review\tdone");
  ASSERT_OK_AND_ASSIGN(std::vector<AuditRecord> none, store_->Audit("hub"));
  EXPECT_TRUE(none.empty());
}

TEST_P(VersionStoreContractTest, AuditActorsByPrefixAcrossSets) {
  ASSERT_OK(store_->AppendAudit(
      {At(0), "courier", "r1", "fit", "refit job 3 (drift)", ""}));
  ASSERT_OK(store_->AppendAudit(
      {At(1), "courier", "r1", "compared", "refit job 3 (drift)", ""}));
  ASSERT_OK(store_->AppendAudit(
      {At(2), "parcel_damage", "d1", "fit", "refit job 12 (schedule)", ""}));
  ASSERT_OK(store_->AppendAudit(
      {At(3), "courier", "r1", "approved", "plumbctl approve by alice", ""}));
  // A prefix is literal: '_' and '%' are no patterns.
  ASSERT_OK(
      store_->AppendAudit({At(4), "courier", "r1", "fit", "refit_job 4", ""}));

  ASSERT_OK_AND_ASSIGN(std::vector<std::string> actors,
                       store_->AuditActors("refit job "));
  std::sort(actors.begin(), actors.end());
  EXPECT_THAT(actors,
              ElementsAre("refit job 12 (schedule)", "refit job 3 (drift)"));
  ASSERT_OK_AND_ASSIGN(std::vector<std::string> everyone,
                       store_->AuditActors(""));
  EXPECT_EQ(everyone.size(), 4u);
}

TEST_P(VersionStoreContractTest, TransactionCommitsOrRollsBackAsAWhole) {
  absl::Status failed = store_->InTransaction([&]() -> absl::Status {
    if (absl::Status s = store_->Insert(
            Version("courier", "r1", VersionState::kActive, At(0)));
        !s.ok()) {
      return s;
    }
    if (absl::Status s = store_->AppendAudit(
            {At(0), "courier", "r1", "loaded", "sets directory", ""});
        !s.ok()) {
      return s;
    }
    return absl::AbortedError("van left without the parcel");
  });
  EXPECT_THAT(failed, StatusIs(absl::StatusCode::kAborted));
  ASSERT_OK_AND_ASSIGN(std::optional<VersionRecord> got,
                       store_->Get("courier", "r1"));
  EXPECT_FALSE(got.has_value());
  ASSERT_OK_AND_ASSIGN(std::vector<AuditRecord> audit,
                       store_->Audit("courier"));
  EXPECT_TRUE(audit.empty());

  ASSERT_OK(store_->InTransaction([&]() -> absl::Status {
    if (absl::Status s = store_->Insert(
            Version("courier", "r1", VersionState::kActive, At(0)));
        !s.ok()) {
      return s;
    }
    if (absl::Status s = store_->RecordActivation("courier", "r1", At(0));
        !s.ok()) {
      return s;
    }
    return store_->AppendAudit(
        {At(0), "courier", "r1", "activated", "sets directory", ""});
  }));
  ASSERT_OK_AND_ASSIGN(got, store_->Active("courier"));
  ASSERT_TRUE(got.has_value());
  EXPECT_EQ(got->version, "r1");
  ASSERT_OK_AND_ASSIGN(audit, store_->Audit("courier"));
  EXPECT_EQ(audit.size(), 1u);

  // A failing statement inside fails the transaction and leaves the store
  // usable.
  EXPECT_THAT(store_->InTransaction([&]() -> absl::Status {
    return store_->Insert(
        Version("courier", "r1", VersionState::kCandidate, At(1)));
  }),
              StatusIs(absl::StatusCode::kAlreadyExists));
  EXPECT_OK(store_->Insert(
      Version("courier", "r2", VersionState::kCandidate, At(1))));
}

}  // namespace
}  // namespace plumbline::daemon
