// File: tests/daemon/registry/lifecycle_test.cc
//
// The lifecycle's rules (daemon/lifecycle.h) in process, on a real ledger
// file in a temp directory: what the sets directory may change and what the
// ledger keeps, the preconditions of approve / shadow / rollback, and that a
// restart serves what the ledger says.
#include "daemon/registry/lifecycle.h"

#include <filesystem>
#include <memory>
#include <string>
#include <vector>

#include "absl/strings/str_cat.h"
#include "daemon/ledger/sqlite_ledger.h"
#include "daemon/registry/sqlite_version_store.h"
#include "daemon/registry/version_store.h"
#include "daemon/scoring/set_registry.h"
#include "gmock/gmock.h"
#include "google/protobuf/util/json_util.h"
#include "gtest/gtest.h"
#include "scorer/coefficient_set.h"
#include "tests/testing/process.h"
#include "tests/testing/test_sets.h"

namespace plumbline::daemon {
namespace {

using testing::TempDir;

// One plumbd's worth of lifecycle: ledger, store, lifecycle, registry.
struct Stack {
  explicit Stack(const TempDir& dir) {
    LedgerOptions options;
    options.path = dir.File("ledger.db");
    ledger = *SqliteLedger::Open(options);
    store = *SqliteVersionStore::Open(options.path);
    lifecycle = std::make_unique<Lifecycle>(store.get());
    registry = std::make_unique<SetRegistry>(dir.File("sets"), lifecycle.get());
    lifecycle->Attach(registry.get(),
                      [this](const ReloadReport&) { ++changes; });
  }
  std::string Active(const std::string& set) {
    PlanPtr plan = registry->Find(set);
    return plan == nullptr ? "" : plan->version();
  }
  std::unique_ptr<Ledger> ledger;
  std::unique_ptr<VersionStore> store;
  std::unique_ptr<Lifecycle> lifecycle;
  std::unique_ptr<SetRegistry> registry;
  int changes = 0;
};

class LifecycleRulesTest : public ::testing::Test {
 protected:
  void SetUp() override {
    std::filesystem::create_directories(dir_.File("sets"));
  }
  void WriteSet(const std::string& version, double intercept = -1.5) {
    ASSERT_TRUE(testing::WriteTextFile(
                    dir_.File("sets/courier.json"),
                    testing::CourierSetJson("courier", version, intercept))
                    .ok());
  }
  v1::CoefficientSet Candidate(const std::string& version) {
    return *scorer::ParseCoefficientSet(
        testing::CourierSetJson("courier", version, -0.5), "test");
  }
  TempDir dir_;
};

TEST_F(LifecycleRulesTest, NewFileVersionsActivateKnownOnesKeepTheLedgerState) {
  WriteSet("v1");
  Stack s(dir_);
  ASSERT_TRUE(s.registry->Reload().ok());
  EXPECT_EQ(s.Active("courier"), "v1");

  ASSERT_TRUE(
      s.lifecycle->AddCandidate({Candidate("c1"), "test", "why", "", {}}).ok());
  EXPECT_EQ(s.Active("courier"), "v1") << "a candidate does not serve";
  ASSERT_TRUE(s.lifecycle->Approve({"courier", "c1", "alice", "ok"}).ok());
  EXPECT_EQ(s.Active("courier"), "c1");
  EXPECT_EQ(s.changes, 1);

  // A reload with the file still holding v1 (known): c1 keeps serving.
  ASSERT_TRUE(s.registry->Reload().ok());
  EXPECT_EQ(s.Active("courier"), "c1");

  // A new version in the file is a deployment: it becomes active.
  WriteSet("v2");
  ASSERT_TRUE(s.registry->Reload().ok());
  EXPECT_EQ(s.Active("courier"), "v2");
  auto versions = *s.lifecycle->List("courier");
  ASSERT_EQ(versions.size(), 3u);
  for (const VersionRecord& v : versions) {
    EXPECT_EQ(v.state, v.version == "v2" ? VersionState::kActive
                                         : VersionState::kRetired)
        << v.version;
  }
}

TEST_F(LifecycleRulesTest, RestartServesWhatTheLedgerSays) {
  WriteSet("v1");
  {
    Stack s(dir_);
    ASSERT_TRUE(s.registry->Reload().ok());
    ASSERT_TRUE(
        s.lifecycle->AddCandidate({Candidate("c1"), "t", "", "", {}}).ok());
    ASSERT_TRUE(s.lifecycle->Approve({"courier", "c1", "alice", ""}).ok());
  }
  Stack again(dir_);
  ASSERT_TRUE(again.registry->Reload().ok());
  EXPECT_EQ(again.Active("courier"), "c1");
  // Served from the ledger's document, not the file.
  EXPECT_EQ(again.registry->Find("courier")->set().intercept(), -0.5);
}

TEST_F(LifecycleRulesTest, ChangedFileUnderAKnownVersionIsIgnored) {
  WriteSet("v1", -1.5);
  Stack s(dir_);
  ASSERT_TRUE(s.registry->Reload().ok());
  WriteSet("v1", 3.0);
  ASSERT_TRUE(s.registry->Reload().ok());
  EXPECT_EQ(s.registry->Find("courier")->set().intercept(), -1.5);
}

TEST_F(LifecycleRulesTest, RemovingTheFileRetiresTheActiveVersion) {
  WriteSet("v1");
  Stack s(dir_);
  ASSERT_TRUE(s.registry->Reload().ok());
  std::filesystem::remove(dir_.File("sets/courier.json"));
  absl::StatusOr<ReloadReport> report = s.registry->Reload();
  ASSERT_TRUE(report.ok());
  EXPECT_EQ(report->unloaded, std::vector<std::string>{"courier"});
  EXPECT_EQ(s.registry->Find("courier"), nullptr);
  EXPECT_EQ((*s.lifecycle->List("courier"))[0].state, VersionState::kRetired);
}

TEST_F(LifecycleRulesTest, PreconditionsAreNamed) {
  WriteSet("v1");
  Stack s(dir_);
  ASSERT_TRUE(s.registry->Reload().ok());
  // Nothing to roll back to yet.
  absl::StatusOr<VersionRecord> r =
      s.lifecycle->Rollback({"courier", "", "a", ""});
  EXPECT_EQ(r.status().code(), absl::StatusCode::kFailedPrecondition);
  EXPECT_NE(r.status().message().find("nothing to roll back to"),
            std::string::npos);
  // Unknown version.
  r = s.lifecycle->Approve({"courier", "nope", "a", ""});
  EXPECT_EQ(r.status().code(), absl::StatusCode::kNotFound);
  // Approving the active version.
  r = s.lifecycle->Approve({"courier", "v1", "a", ""});
  EXPECT_EQ(r.status().code(), absl::StatusCode::kFailedPrecondition);
  // Shadowing the active version.
  r = s.lifecycle->Shadow({"courier", "v1", "a", ""});
  EXPECT_EQ(r.status().code(), absl::StatusCode::kFailedPrecondition);
  // Loading a known version again.
  ASSERT_TRUE(
      s.lifecycle->AddCandidate({Candidate("c1"), "t", "", "", {}}).ok());
  r = s.lifecycle->AddCandidate({Candidate("c1"), "t", "", "", {}});
  EXPECT_EQ(r.status().code(), absl::StatusCode::kAlreadyExists);
  // A retired version is activated, not approved.
  ASSERT_TRUE(s.lifecycle->Approve({"courier", "c1", "a", ""}).ok());
  r = s.lifecycle->Approve({"courier", "v1", "a", ""});
  EXPECT_EQ(r.status().code(), absl::StatusCode::kFailedPrecondition);
  ASSERT_TRUE(s.lifecycle->Rollback({"courier", "", "a", ""}).ok());
  EXPECT_EQ(s.Active("courier"), "v1");
}

TEST_F(LifecycleRulesTest, ShadowsServeBesideTheActiveVersion) {
  WriteSet("v1");
  Stack s(dir_);
  ASSERT_TRUE(s.registry->Reload().ok());
  ASSERT_TRUE(
      s.lifecycle->AddCandidate({Candidate("c1"), "t", "", "", {}}).ok());
  ASSERT_TRUE(s.lifecycle->Shadow({"courier", "c1", "a", "try it"}).ok());
  EXPECT_EQ(s.Active("courier"), "v1");
  std::vector<PlanPtr> shadows = s.registry->Shadows("courier");
  ASSERT_EQ(shadows.size(), 1u);
  EXPECT_EQ(shadows[0]->version(), "c1");
  std::vector<PlanPtr> monitored = s.registry->AllMonitored();
  ASSERT_EQ(monitored.size(), 2u);
  EXPECT_EQ(monitored[0]->version(), "v1") << "the active version first";
  // Activating the shadow ends its shadowing.
  ASSERT_TRUE(s.lifecycle->Activate({"courier", "c1", "a", ""}).ok());
  EXPECT_TRUE(s.registry->Shadows("courier").empty());
  EXPECT_EQ(s.Active("courier"), "c1");
}

// ---- Schema changes: calls valid today must not fail tomorrow ----

// The courier set of tests/testing/test_sets.h without its 'region'
// feature: callers that send region would be refused.
v1::CoefficientSet WithoutRegion(const std::string& version) {
  v1::CoefficientSet set = *scorer::ParseCoefficientSet(
      testing::CourierSetJson("courier", version, -0.5), "test");
  auto* features = set.mutable_features();
  for (int i = 0; i < features->size(); ++i) {
    if (features->Get(i).name() == "region") {
      features->DeleteSubrange(i, 1);
      break;
    }
  }
  return set;
}

std::vector<std::string> AuditActions(Stack& s) {
  std::vector<std::string> actions;
  const std::vector<AuditRecord> audit = *s.lifecycle->Audit("courier");
  for (const AuditRecord& r : audit) {
    actions.push_back(r.action);
  }
  return actions;
}

TEST_F(LifecycleRulesTest, AnIncompatibleVersionIsRefusedNamingTheDifference) {
  WriteSet("v1");
  Stack s(dir_);
  ASSERT_TRUE(s.registry->Reload().ok());
  // Loading it is refused unless allowed...
  absl::StatusOr<VersionRecord> refused =
      s.lifecycle->AddCandidate({WithoutRegion("c1"), "t", "", "", {}});
  ASSERT_EQ(refused.status().code(), absl::StatusCode::kFailedPrecondition);
  EXPECT_THAT(std::string(refused.status().message()),
              ::testing::HasSubstr("feature 'region' is gone"));
  NewVersion allowed{WithoutRegion("c1"), "t", "", "", {}};
  allowed.allow_schema_change = true;
  ASSERT_TRUE(s.lifecycle->AddCandidate(allowed).ok());
  // ...and so are activating, approving and shadowing it.
  for (auto op :
       {&Lifecycle::Activate, &Lifecycle::Approve, &Lifecycle::Shadow}) {
    absl::StatusOr<VersionRecord> r =
        (s.lifecycle.get()->*op)({"courier", "c1", "alice", "try"});
    EXPECT_EQ(r.status().code(), absl::StatusCode::kFailedPrecondition);
    EXPECT_THAT(std::string(r.status().message()),
                ::testing::HasSubstr("--allow_schema_change"));
  }
  EXPECT_EQ(s.Active("courier"), "v1");
  StateChange approve{"courier", "c1", "alice", "callers updated"};
  approve.allow_schema_change = true;
  ASSERT_TRUE(s.lifecycle->Approve(approve).ok());
  EXPECT_EQ(s.Active("courier"), "c1");
  // Both allowances are in the audit, with the difference.
  const std::vector<AuditRecord> audit = *s.lifecycle->Audit("courier");
  int allowed_entries = 0;
  for (const AuditRecord& r : audit) {
    if (r.action != "schema_change_allowed") continue;
    ++allowed_entries;
    EXPECT_THAT(r.detail, ::testing::HasSubstr("feature 'region' is gone"));
  }
  EXPECT_EQ(allowed_entries, 2);
  // Rolling back returns to the schema callers used before: allowed, and
  // recorded.
  ASSERT_TRUE(s.lifecycle->Rollback({"courier", "", "alice", "undo"}).ok());
  EXPECT_EQ(s.Active("courier"), "v1");
}

TEST_F(LifecycleRulesTest, ACompatibleVersionNeedsNoAllowance) {
  WriteSet("v1");
  Stack s(dir_);
  ASSERT_TRUE(s.registry->Reload().ok());
  // Other coefficients, same features: nothing to allow.
  ASSERT_TRUE(
      s.lifecycle->AddCandidate({Candidate("c1"), "t", "", "", {}}).ok());
  ASSERT_TRUE(s.lifecycle->Approve({"courier", "c1", "alice", "ok"}).ok());
  for (const std::string& action : AuditActions(s)) {
    EXPECT_NE(action, "schema_change_allowed");
  }
}

TEST_F(LifecycleRulesTest, AnIncompatibleFileVersionStaysACandidate) {
  WriteSet("v1");
  Stack s(dir_);
  ASSERT_TRUE(s.registry->Reload().ok());
  std::string json;
  ASSERT_TRUE(
      google::protobuf::util::MessageToJsonString(WithoutRegion("v2"), &json)
          .ok());
  ASSERT_TRUE(
      testing::WriteTextFile(dir_.File("sets/courier.json"), json).ok());
  ASSERT_TRUE(s.registry->Reload().ok());
  EXPECT_EQ(s.Active("courier"), "v1") << "the old version keeps serving";
  bool found = false;
  const std::vector<VersionRecord> versions = *s.lifecycle->List("courier");
  for (const VersionRecord& r : versions) {
    if (r.version != "v2") continue;
    found = true;
    EXPECT_EQ(r.state, VersionState::kCandidate);
  }
  EXPECT_TRUE(found);
  EXPECT_THAT(AuditActions(s), ::testing::Contains("not_activated"));
  // A person who has updated the callers serves it.
  StateChange activate{"courier", "v2", "alice", "callers updated"};
  activate.allow_schema_change = true;
  ASSERT_TRUE(s.lifecycle->Activate(activate).ok());
  EXPECT_EQ(s.Active("courier"), "v2");
}

TEST_F(LifecycleRulesTest, TheSameFileWithAnotherMapOrderIsNotAChange) {
  // Baselines hold maps (level proportions) whose JSON key order is not
  // fixed: the same set written with keys in another order is the same
  // version, not a reuse.
  WriteSet("v1");
  Stack s(dir_);
  ASSERT_TRUE(s.registry->Reload().ok());
  std::string json = testing::CourierSetJson("courier", "v1", -1.5);
  v1::CoefficientSet set = *scorer::ParseCoefficientSet(json, "t");
  // Re-serialize (protobuf may order map keys differently from the file).
  std::string again;
  ASSERT_TRUE(google::protobuf::util::MessageToJsonString(set, &again).ok());
  ASSERT_TRUE(
      testing::WriteTextFile(dir_.File("sets/courier.json"), again).ok());
  ASSERT_TRUE(s.registry->Reload().ok());
  EXPECT_EQ(s.Active("courier"), "v1");
}

TEST_F(LifecycleRulesTest, AStoppedShadowIsRetiredAndAudited) {
  WriteSet("v1");
  Stack s(dir_);
  ASSERT_TRUE(s.registry->Reload().ok());
  ASSERT_TRUE(
      s.lifecycle->AddCandidate({Candidate("c1"), "t", "", "", {}}).ok());
  ASSERT_TRUE(s.lifecycle->Shadow({"courier", "c1", "a", "try it"}).ok());
  ASSERT_TRUE(s.lifecycle
                  ->StopShadow({"courier", "c1", "plumbd",
                                "stopped after 100 consecutive calls"})
                  .ok());
  EXPECT_TRUE(s.registry->Shadows("courier").empty());
  EXPECT_THAT(AuditActions(s), ::testing::Contains("shadow_stopped"));
  EXPECT_EQ(
      s.lifecycle->StopShadow({"courier", "c1", "plumbd", ""}).status().code(),
      absl::StatusCode::kFailedPrecondition);
}

TEST_F(LifecycleRulesTest, ARestoredFileServesItsVersionAgain) {
  WriteSet("v1");
  Stack s(dir_);
  ASSERT_TRUE(s.registry->Reload().ok());
  // The file goes (its version is retired), then comes back: the set served
  // nothing meanwhile, so the version serves again.
  const std::string text =
      testing::ReadTextFile(dir_.File("sets/courier.json"));
  std::filesystem::remove(dir_.File("sets/courier.json"));
  ASSERT_TRUE(s.registry->Reload().ok());
  EXPECT_EQ(s.Active("courier"), "");
  ASSERT_TRUE(
      testing::WriteTextFile(dir_.File("sets/courier.json"), text).ok());
  ASSERT_TRUE(s.registry->Reload().ok());
  EXPECT_EQ(s.Active("courier"), "v1");
  EXPECT_EQ((*s.lifecycle->List("courier"))[0].state, VersionState::kActive);
}

TEST_F(LifecycleRulesTest, AFileNamingARetiredVersionDoesNotDisplaceTheActive) {
  WriteSet("v1");
  Stack s(dir_);
  ASSERT_TRUE(s.registry->Reload().ok());
  WriteSet("v2");  // a deployment: v2 serves, v1 is retired
  ASSERT_TRUE(s.registry->Reload().ok());
  WriteSet("v1");  // the old file again
  ASSERT_TRUE(s.registry->Reload().ok());
  EXPECT_EQ(s.Active("courier"), "v2") << "a person decides, not a file";
}

}  // namespace
}  // namespace plumbline::daemon
