// Two real plumbd replicas on one PostgreSQL ledger (the cluster of the
// ctest fixture pg_cluster, a fresh database): records scored through one
// take their outcomes through the other, both replicas' model-health
// figures are the whole fleet's, a candidate approved through one is
// served by the other, and when one replica is killed (SIGKILL) in the
// middle of traffic the other keeps serving and no acknowledged row is
// missing from the database.
#include <grpcpp/client_context.h>
#include <grpcpp/create_channel.h>
#include <grpcpp/security/credentials.h>
#include <signal.h>

#include <atomic>
#include <filesystem>
#include <memory>
#include <string>
#include <thread>
#include <vector>

#include "absl/strings/str_cat.h"
#include "absl/time/clock.h"
#include "absl/time/time.h"
#include "daemon/pg/pg_connection.h"
#include "gmock/gmock.h"
#include "google/protobuf/util/json_util.h"
#include "gtest/gtest.h"
#include "plumbline/v1/monitor.grpc.pb.h"
#include "plumbline/v1/outcomes.grpc.pb.h"
#include "plumbline/v1/registry.grpc.pb.h"
#include "plumbline/v1/scoring.grpc.pb.h"
#include "tests/testing/pg_cluster.h"
#include "tests/testing/process.h"
#include "tests/testing/status_matchers.h"
#include "tests/testing/test_sets.h"

namespace plumbline::daemon {
namespace {

using testing::CourierSetJson;
using testing::PlumbdProcess;
using testing::PollUntil;
using testing::TempDir;
using testing::WriteTextFile;

class FleetTest : public ::testing::Test {
 protected:
  void SetUp() override {
    absl::StatusOr<std::string> uri = testing::FreshPgDatabase("courier_fleet");
    ASSERT_TRUE(uri.ok()) << uri.status();
    uri_ = *uri;
    for (int r = 0; r < 2; ++r) {
      const std::string home = dir_.File(absl::StrCat("replica-", r));
      std::filesystem::create_directories(home + "/sets");
      ASSERT_TRUE(WriteTextFile(home + "/sets/courier.json",
                                CourierSetJson("courier", "2026-11"))
                      .ok());
      ASSERT_TRUE(WriteTextFile(home + "/plumbd.json",
                                R"({"drift_policy": {"tick_seconds": 1}})")
                      .ok());
      homes_.push_back(home);
      ASSERT_NO_FATAL_FAILURE(StartReplica(r));
    }
  }

  void StartReplica(int r) {
    auto plumbd = PlumbdProcess::Start(
        homes_[r], {"--config", homes_[r] + "/plumbd.json", "--sets",
                    homes_[r] + "/sets", "--ledger", uri_});
    ASSERT_TRUE(plumbd.ok()) << plumbd.status();
    if (replicas_.size() <= static_cast<size_t>(r)) replicas_.resize(r + 1);
    replicas_[r] = *std::move(plumbd);
  }

  std::shared_ptr<grpc::Channel> Channel(int r) {
    return grpc::CreateChannel(replicas_[r]->addr(),
                               grpc::InsecureChannelCredentials());
  }

  grpc::Status Score(int r, const std::string& id, v1::ScoreReply* reply) {
    v1::ScoreRequest request;
    request.set_set("courier");
    request.mutable_record()->set_record_id(id);
    EXPECT_TRUE(google::protobuf::util::JsonStringToMessage(
                    R"({"distance_km": 6, "region": "suburban",
                        "service": "standard", "hour": 14})",
                    request.mutable_record()->mutable_features())
                    .ok());
    grpc::ClientContext context;
    context.set_deadline(absl::ToChronoTime(absl::Now() + absl::Seconds(10)));
    return v1::Scoring::NewStub(Channel(r))->Score(&context, request, reply);
  }

  grpc::Status Report(int r, const std::string& id, int label,
                      v1::ReportOutcomesReply* reply) {
    v1::ReportOutcomesRequest request;
    v1::Outcome* o = request.add_outcomes();
    o->set_record_id(id);
    o->set_label(label);
    grpc::ClientContext context;
    context.set_deadline(absl::ToChronoTime(absl::Now() + absl::Seconds(10)));
    return v1::Outcomes::NewStub(Channel(r))
        ->ReportOutcomes(&context, request, reply);
  }

  // The labelled count and log-loss of the version's first window on
  // replica r ({-1, 0} when unknown).
  std::pair<int64_t, double> Health(int r) {
    v1::GetSetHealthRequest request;
    request.set_set("courier");
    v1::SetHealth health;
    grpc::ClientContext context;
    grpc::Status s = v1::Monitor::NewStub(Channel(r))
                         ->GetSetHealth(&context, request, &health);
    if (!s.ok() || health.windows().empty()) return {-1, 0};
    return {health.windows(0).labelled(), health.windows(0).log_loss().value()};
  }

  int64_t Count(const std::string& sql) {
    auto db = PgConnection::Connect(uri_);
    EXPECT_TRUE(db.ok()) << db.status();
    if (!db.ok()) return -1;
    auto r = (*db)->Query(sql);
    EXPECT_TRUE(r.ok()) << r.status();
    if (!r.ok() || r->rows.empty() || !r->rows[0][0]) return -1;
    return std::stoll(*r->rows[0][0]);
  }

  TempDir dir_;
  std::string uri_;
  std::vector<std::string> homes_;
  std::vector<std::unique_ptr<PlumbdProcess>> replicas_;
};

TEST_F(FleetTest, ScoresThroughOneOutcomesThroughTheOtherOneFleetsFigures) {
  constexpr int kRecords = 60;
  for (int i = 0; i < kRecords; ++i) {
    v1::ScoreReply reply;
    grpc::Status s = Score(i % 2, absl::StrCat("parcel-", i), &reply);
    ASSERT_TRUE(s.ok()) << s.error_message();
  }
  // Every outcome through the replica that did not score its record.
  for (int i = 0; i < kRecords; ++i) {
    v1::ReportOutcomesReply reply;
    grpc::Status s =
        Report((i + 1) % 2, absl::StrCat("parcel-", i), i % 3 == 0, &reply);
    ASSERT_TRUE(s.ok()) << s.error_message();
    ASSERT_EQ(reply.results_size(), 1);
    EXPECT_EQ(reply.results(0).code(), 0) << reply.results(0).message();
  }
  // A record id is one record across the fleet: a retry through the other
  // replica is the stored score, not a second row.
  v1::ScoreReply again;
  ASSERT_TRUE(Score(1, "parcel-0", &again).ok());
  EXPECT_EQ(Count("SELECT count(*) FROM scores"), kRecords);
  EXPECT_EQ(Count("SELECT count(*) FROM outcomes"), kRecords);
  // Both replicas' windows hold the fleet's records, with the same figures.
  ASSERT_TRUE(PollUntil([&] {
    return Health(0).first == kRecords && Health(1).first == kRecords;
  })) << Health(0).first
      << " " << Health(1).first;
  EXPECT_DOUBLE_EQ(Health(0).second, Health(1).second);
}

TEST_F(FleetTest, AKilledReplicaLosesNoAcknowledgedRowAndTheOtherServes) {
  std::atomic<bool> stop{false};
  std::atomic<int> acknowledged[2] = {0, 0};
  std::atomic<int> failed_on_survivor{0};
  std::vector<std::thread> callers;
  for (int r = 0; r < 2; ++r) {
    callers.emplace_back([&, r] {
      for (int n = 0; !stop.load(); ++n) {
        v1::ScoreReply reply;
        grpc::Status s = Score(r, absl::StrCat("parcel-", r, "-", n), &reply);
        if (s.ok()) {
          acknowledged[r].fetch_add(1);
        } else if (r == 1) {
          failed_on_survivor.fetch_add(1);
        }
      }
    });
  }
  ASSERT_TRUE(PollUntil(
      [&] { return acknowledged[0].load() > 50 && acknowledged[1] > 50; }));
  replicas_[0]->Signal(SIGKILL);
  ASSERT_TRUE(replicas_[0]->WaitForExit().ok());
  const int survivor_before = acknowledged[1].load();
  ASSERT_TRUE(
      PollUntil([&] { return acknowledged[1] > survivor_before + 50; }));
  stop.store(true);
  for (std::thread& t : callers) t.join();
  EXPECT_EQ(failed_on_survivor.load(), 0);
  // Every acknowledged score is a row; a call cut by the kill may have
  // committed without its answer, so replica 0 may have one row more per
  // caller than it acknowledged.
  const int64_t rows0 =
      Count("SELECT count(*) FROM scores WHERE record_id LIKE 'parcel-0-%'");
  const int64_t rows1 =
      Count("SELECT count(*) FROM scores WHERE record_id LIKE 'parcel-1-%'");
  EXPECT_GE(rows0, acknowledged[0].load());
  EXPECT_LE(rows0, acknowledged[0].load() + 1);
  EXPECT_EQ(rows1, acknowledged[1].load());
  // The killed replica comes back on the same ledger and serves.
  ASSERT_NO_FATAL_FAILURE(StartReplica(0));
  v1::ScoreReply reply;
  EXPECT_TRUE(Score(0, "parcel-after", &reply).ok());
}

TEST_F(FleetTest, AVersionApprovedThroughOneIsServedByTheOther) {
  auto registry = v1::Registry::NewStub(Channel(0));
  {
    v1::LoadCandidateRequest load;
    ASSERT_TRUE(
        google::protobuf::util::JsonStringToMessage(
            CourierSetJson("courier", "2026-12", -1.0), load.mutable_set())
            .ok());
    load.set_actor("dispatch-lead");
    load.set_reason("winter routes");
    v1::VersionInfo info;
    grpc::ClientContext context;
    grpc::Status s = registry->LoadCandidate(&context, load, &info);
    ASSERT_TRUE(s.ok()) << s.error_message();
  }
  {
    v1::VersionRequest approve;
    approve.set_set("courier");
    approve.set_version("2026-12");
    approve.set_actor("dispatch-lead");
    approve.set_reason("reviewed");
    v1::VersionInfo info;
    grpc::ClientContext context;
    grpc::Status s = registry->Approve(&context, approve, &info);
    ASSERT_TRUE(s.ok()) << s.error_message();
  }
  // Replica 1 serves it within the stated propagation time (PollUntil's
  // 30 s is only the safety net).
  int n = 0;
  ASSERT_TRUE(PollUntil([&] {
    v1::ScoreReply reply;
    return Score(1, absl::StrCat("parcel-v-", n++), &reply).ok() &&
           reply.version() == "2026-12";
  }));
}

TEST_F(FleetTest, OnlyTheLeaderTakesRefitRequestsAndTheOthersNameIt) {
  int leader = -1;
  ASSERT_TRUE(PollUntil([&] {
    for (int r = 0; r < 2; ++r) {
      if (replicas_[r]->CountLogLines("event=fleet_leader_taken") > 0) {
        leader = r;
      }
    }
    return leader >= 0;
  }));
  const int other = 1 - leader;
  EXPECT_EQ(replicas_[other]->CountLogLines("event=fleet_leader_taken"), 0);
  v1::RefitRequest request;
  request.set_set("courier");
  request.set_actor("dispatch-lead");
  v1::RefitReply reply;
  grpc::ClientContext context;
  grpc::Status s =
      v1::Registry::NewStub(Channel(other))->Refit(&context, request, &reply);
  EXPECT_EQ(s.error_code(), grpc::StatusCode::FAILED_PRECONDITION);
  // The refusal names the leader (host, pid, listen address).
  EXPECT_THAT(s.error_message(),
              ::testing::HasSubstr(
                  absl::StrCat(" pid ", replicas_[leader]->pid(), " listen ")));
  EXPECT_THAT(s.error_message(),
              ::testing::HasSubstr("does not run the fleet's refit jobs"));
}

}  // namespace
}  // namespace plumbline::daemon
