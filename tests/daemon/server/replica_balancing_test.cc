// File: tests/daemon/server/replica_balancing_test.cc
//
// Client-side balancing over plumbd replicas, the gRPC way: a channel with
// the round_robin policy over a target that lists two real plumbd processes,
// with client-side health checking on plumbline.v1.Scoring. Calls spread
// over both; when one replica is stopped with a drain (grpc.drain_seconds),
// it says NOT_SERVING first, the channel moves every call to the other, and
// no call fails. Each replica here keeps its own SQLite ledger (the count of
// rows in each says where calls went); sharing one ledger is the PostgreSQL
// fleet's business.
#include <grpcpp/client_context.h>
#include <grpcpp/create_channel.h>
#include <grpcpp/security/credentials.h>
#include <grpcpp/support/channel_arguments.h>
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
#include "daemon/ledger/sqlite_db.h"
#include "google/protobuf/util/json_util.h"
#include "gtest/gtest.h"
#include "plumbline/v1/scoring.grpc.pb.h"
#include "tests/testing/process.h"
#include "tests/testing/test_sets.h"

namespace plumbline::daemon {
namespace {

using testing::CourierSetJson;
using testing::PlumbdProcess;
using testing::TempDir;
using testing::WriteTextFile;

class ReplicaBalancingTest : public ::testing::Test {
 protected:
  void SetUp() override {
    for (int r = 0; r < 2; ++r) {
      const std::string home = dir_.File(absl::StrCat("replica-", r));
      std::filesystem::create_directories(home + "/sets");
      ASSERT_TRUE(WriteTextFile(home + "/sets/courier.json",
                                CourierSetJson("courier", "2026-11"))
                      .ok());
      ASSERT_TRUE(WriteTextFile(home + "/plumbd.json",
                                R"({"grpc": {"drain_seconds": 2}})")
                      .ok());
      ledgers_.push_back(home + "/ledger.db");
      auto plumbd = PlumbdProcess::Start(
          home, {"--config", home + "/plumbd.json", "--sets", home + "/sets",
                 "--ledger", ledgers_.back()});
      ASSERT_TRUE(plumbd.ok()) << plumbd.status();
      replicas_.push_back(*std::move(plumbd));
    }
    grpc::ChannelArguments args;
    // round_robin over every address of the target; a replica whose
    // health check says NOT_SERVING gets no new calls.
    args.SetServiceConfigJSON(
        R"({"loadBalancingConfig": [{"round_robin": {}}],
            "healthCheckConfig": {"serviceName": "plumbline.v1.Scoring"}})");
    const std::string target =
        absl::StrCat("ipv4:", replicas_[0]->addr(), ",", replicas_[1]->addr());
    stub_ = v1::Scoring::NewStub(grpc::CreateCustomChannel(
        target, grpc::InsecureChannelCredentials(), args));
  }

  grpc::Status ScoreParcel(int n) {
    v1::ScoreRequest request;
    request.set_set("courier");
    request.mutable_record()->set_record_id(absl::StrCat("parcel-rr-", n));
    EXPECT_TRUE(google::protobuf::util::JsonStringToMessage(
                    R"({"distance_km": 6, "region": "suburban",
                        "service": "standard", "hour": 14})",
                    request.mutable_record()->mutable_features())
                    .ok());
    v1::ScoreReply reply;
    grpc::ClientContext context;
    context.set_deadline(absl::ToChronoTime(absl::Now() + absl::Seconds(10)));
    return stub_->Score(&context, request, &reply);
  }

  int64_t Rows(int replica) {
    auto db = SqliteDb::Open(ledgers_[replica]);
    EXPECT_TRUE(db.ok()) << db.status();
    if (!db.ok()) return -1;
    auto n = (*db)->QueryInt64("SELECT COUNT(*) FROM scores");
    EXPECT_TRUE(n.ok()) << n.status();
    return n.ok() ? *n : -1;
  }

  TempDir dir_;
  std::vector<std::string> ledgers_;
  std::vector<std::unique_ptr<PlumbdProcess>> replicas_;
  std::unique_ptr<v1::Scoring::Stub> stub_;
};

TEST_F(ReplicaBalancingTest,
       RoundRobinSpreadsCallsAndADrainingReplicaLosesNone) {
  int next = 0;
  // Both replicas ready in the channel: the first calls may all go to the
  // first one that connects; 40 calls reach both once both are up.
  for (int i = 0; i < 40; ++i) {
    grpc::Status s = ScoreParcel(next++);
    ASSERT_TRUE(s.ok()) << s.error_message();
  }
  // Stop replica 0 while a caller keeps scoring through the channel.
  std::atomic<bool> stop{false};
  std::atomic<int> ok{0};
  std::vector<std::string> failures;
  std::thread caller([&] {
    int n = 1000;
    while (!stop.load()) {
      grpc::Status s = ScoreParcel(n++);
      if (s.ok()) {
        ok.fetch_add(1);
      } else if (failures.size() < 5) {
        failures.push_back(
            absl::StrCat(s.error_code(), " ", s.error_message()));
      }
    }
  });
  absl::SleepFor(absl::Milliseconds(300));
  replicas_[0]->Signal(SIGTERM);
  absl::StatusOr<int> exit_status = replicas_[0]->WaitForExit();
  absl::SleepFor(absl::Milliseconds(300));  // calls after it is gone
  stop.store(true);
  caller.join();
  ASSERT_TRUE(exit_status.ok());
  EXPECT_EQ(*exit_status, 0) << replicas_[0]->Log();
  EXPECT_EQ(replicas_[0]->CountLogLines("event=draining"), 1);
  EXPECT_TRUE(failures.empty()) << failures.front();
  EXPECT_GT(ok.load(), 0);

  replicas_[1]->Signal(SIGTERM);
  ASSERT_TRUE(replicas_[1]->WaitForExit().ok());
  // Every acknowledged call is a row in one of the two ledgers, and both
  // replicas took calls.
  const int64_t r0 = Rows(0), r1 = Rows(1);
  EXPECT_GT(r0, 0);
  EXPECT_GT(r1, 0);
  EXPECT_EQ(r0 + r1, 40 + ok.load());
}

}  // namespace
}  // namespace plumbline::daemon
