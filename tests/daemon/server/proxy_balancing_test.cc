// File: tests/daemon/server/proxy_balancing_test.cc
//
// Balancing over plumbd replicas for callers that cannot balance
// themselves: a plain insecure channel to one haproxy (Debian's, started
// by the test) that speaks HTTP/2 on both sides and spreads calls round
// robin over two real plumbd processes. haproxy checks each replica with
// GET /serving on its metrics listener; when replica 0 is stopped with a
// drain (grpc.drain_seconds), /serving answers 503 first, haproxy takes it
// out of the rotation, and no call fails. A caller's error status (an
// unknown set) reaches the caller through haproxy as plumbd gave it. Each
// replica keeps its own SQLite ledger: the rows in each say where calls
// went, and every acknowledged call is one of them.
//
// haproxy must be installed (ops/packages.txt): without it the test fails,
// it does not skip.
#include <arpa/inet.h>
#include <grpcpp/client_context.h>
#include <grpcpp/create_channel.h>
#include <grpcpp/security/credentials.h>
#include <netinet/in.h>
#include <signal.h>
#include <sys/socket.h>
#include <sys/wait.h>
#include <unistd.h>

#include <atomic>
#include <cstdlib>
#include <filesystem>
#include <memory>
#include <string>
#include <thread>
#include <vector>

#include "absl/strings/match.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_split.h"
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
using testing::PollUntil;
using testing::ReadTextFile;
using testing::TempDir;
using testing::WriteTextFile;

// Debian installs haproxy in /usr/sbin, which a user's PATH may lack.
std::string FindHaproxy() {
  std::vector<std::string> dirs = {"/usr/sbin", "/usr/bin", "/sbin"};
  if (const char* path = std::getenv("PATH"); path != nullptr) {
    for (absl::string_view dir : absl::StrSplit(path, ':', absl::SkipEmpty())) {
      dirs.emplace_back(dir);
    }
  }
  for (const std::string& dir : dirs) {
    const std::string candidate = absl::StrCat(dir, "/haproxy");
    if (access(candidate.c_str(), X_OK) == 0) return candidate;
  }
  return "";
}

// A port on 127.0.0.1 that was free a moment ago (the kernel's pick for
// port 0); 0 if none could be had. haproxy cannot tell us the port it
// bound, so it gets one chosen here.
int FreePort() {
  const int fd = socket(AF_INET, SOCK_STREAM, 0);
  if (fd < 0) return 0;
  sockaddr_in addr{};
  addr.sin_family = AF_INET;
  addr.sin_port = 0;
  inet_pton(AF_INET, "127.0.0.1", &addr.sin_addr);
  socklen_t len = sizeof(addr);
  int port = 0;
  if (bind(fd, reinterpret_cast<sockaddr*>(&addr), sizeof(addr)) == 0 &&
      getsockname(fd, reinterpret_cast<sockaddr*>(&addr), &len) == 0) {
    port = ntohs(addr.sin_port);
  }
  close(fd);
  return port;
}

// "127.0.0.1:7391" -> "7391".
std::string PortOf(const std::string& host_port) {
  return host_port.substr(host_port.rfind(':') + 1);
}

class ProxyBalancingTest : public ::testing::Test {
 protected:
  void SetUp() override {
    const std::string haproxy = FindHaproxy();
    ASSERT_FALSE(haproxy.empty())
        << "haproxy is not installed: this test needs Debian's haproxy "
           "(listed in ops/packages.txt; ops/setup installs it, or "
           "apt-get install haproxy)";
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
      ASSERT_FALSE((*plumbd)->MetricsAddress().empty()) << (*plumbd)->Log();
      replicas_.push_back(*std::move(plumbd));
    }
    const int port = FreePort();
    ASSERT_NE(port, 0);
    proxy_addr_ = absl::StrCat("127.0.0.1:", port);
    // h2 on both sides: gRPC needs HTTP/2 end to end (trailers carry the
    // status). The check is plain HTTP/1.1 to the metrics port; `fall 1`
    // takes a replica out at its first 503.
    std::string config = absl::StrCat(
        "defaults\n"
        "  mode http\n"
        "  timeout connect 5s\n"
        "  timeout client 60s\n"
        "  timeout server 60s\n"
        "frontend plumbd_grpc\n"
        "  bind ",
        proxy_addr_,
        " proto h2\n"
        "  default_backend plumbd_replicas\n"
        "backend plumbd_replicas\n"
        "  balance roundrobin\n"
        "  option httpchk GET /serving\n"
        "  http-check expect status 200\n");
    for (int r = 0; r < 2; ++r) {
      absl::StrAppend(&config, "  server replica-", r, " ",
                      replicas_[r]->addr(), " proto h2 check port ",
                      PortOf(replicas_[r]->MetricsAddress()),
                      " check-proto h1 inter 200ms fall 1 rise 1\n");
    }
    const std::string config_path = dir_.File("haproxy.cfg");
    ASSERT_TRUE(WriteTextFile(config_path, config).ok());
    haproxy_log_ = dir_.File("haproxy.log");
    // -db: in the foreground, as the test's user (no user, no chroot).
    absl::StatusOr<pid_t> pid =
        testing::Spawn({haproxy, "-db", "-f", config_path},
                       {.out_path = haproxy_log_, .err_path = haproxy_log_});
    ASSERT_TRUE(pid.ok()) << pid.status();
    haproxy_pid_ = *pid;
    stub_ = v1::Scoring::NewStub(
        grpc::CreateChannel(proxy_addr_, grpc::InsecureChannelCredentials()));
    // haproxy is up once a call goes through it.
    ASSERT_TRUE(PollUntil([&] {
      int status = 0;
      if (waitpid(haproxy_pid_, &status, WNOHANG) == haproxy_pid_) {
        haproxy_pid_ = 0;
        return true;  // gone: reported below
      }
      return ScoreParcel(next_++).ok();
    })) << HaproxyLog();
    ASSERT_NE(haproxy_pid_, 0) << "haproxy exited:\n" << HaproxyLog();
    ++acknowledged_;
  }

  void TearDown() override {
    if (haproxy_pid_ > 0) {
      kill(haproxy_pid_, SIGKILL);
      waitpid(haproxy_pid_, nullptr, 0);
    }
  }

  std::string HaproxyLog() const {
    return absl::StrCat("haproxy log:\n", ReadTextFile(haproxy_log_));
  }

  static v1::ScoreRequest Parcel(const std::string& set, int n) {
    v1::ScoreRequest request;
    request.set_set(set);
    request.mutable_record()->set_record_id(absl::StrCat("parcel-hp-", n));
    EXPECT_TRUE(google::protobuf::util::JsonStringToMessage(
                    R"({"distance_km": 6, "region": "suburban",
                        "service": "standard", "hour": 14})",
                    request.mutable_record()->mutable_features())
                    .ok());
    return request;
  }

  static grpc::Status Score(v1::Scoring::Stub* stub,
                            const v1::ScoreRequest& request) {
    v1::ScoreReply reply;
    grpc::ClientContext context;
    context.set_deadline(absl::ToChronoTime(absl::Now() + absl::Seconds(10)));
    return stub->Score(&context, request, &reply);
  }

  grpc::Status ScoreParcel(int n) {
    return Score(stub_.get(), Parcel("courier", n));
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
  std::string proxy_addr_;
  std::string haproxy_log_;
  pid_t haproxy_pid_ = 0;
  std::unique_ptr<v1::Scoring::Stub> stub_;
  int next_ = 0;          // record number of the next call
  int acknowledged_ = 0;  // calls answered OK through haproxy
};

TEST_F(ProxyBalancingTest, RoundRobinSpreadsCallsAndADrainingReplicaLosesNone) {
  // Calls alternate between the replicas: both ledgers soon hold rows (the
  // ledger commits a moment after the answer, hence the polling).
  ASSERT_TRUE(PollUntil([&] {
    grpc::Status s = ScoreParcel(next_++);
    EXPECT_TRUE(s.ok()) << s.error_message();
    if (s.ok()) ++acknowledged_;
    return Rows(0) > 0 && Rows(1) > 0;
  })) << HaproxyLog();

  // Stop replica 0 while a caller keeps scoring through haproxy.
  std::atomic<bool> stop{false};
  std::atomic<int> ok{0};
  std::vector<std::string> failures;
  std::thread caller([&] {
    int n = 100000;
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
  absl::SleepFor(absl::Milliseconds(500));  // calls after it is gone
  stop.store(true);
  caller.join();
  ASSERT_TRUE(exit_status.ok());
  EXPECT_EQ(*exit_status, 0) << replicas_[0]->Log();
  EXPECT_EQ(replicas_[0]->CountLogLines("event=draining"), 1);
  EXPECT_TRUE(failures.empty()) << failures.front() << "\n" << HaproxyLog();
  EXPECT_GT(ok.load(), 0);
  // haproxy took replica 0 out on its probe's 503, not on a refused
  // connection (haproxy's stderr, "Server <backend>/<server> is DOWN,
  // reason: Layer7 wrong status, code: 503, ...").
  bool down_on_503 = false;
  for (absl::string_view line :
       absl::StrSplit(ReadTextFile(haproxy_log_), '\n')) {
    down_on_503 =
        down_on_503 || (absl::StrContains(line, "replica-0 is DOWN") &&
                        absl::StrContains(line, "code: 503"));
  }
  EXPECT_TRUE(down_on_503) << HaproxyLog();

  replicas_[1]->Signal(SIGTERM);
  ASSERT_TRUE(replicas_[1]->WaitForExit().ok());
  // Every acknowledged call is a row in one of the two ledgers, and both
  // replicas took calls.
  const int64_t r0 = Rows(0), r1 = Rows(1);
  EXPECT_GT(r0, 0);
  EXPECT_GT(r1, 0);
  EXPECT_EQ(r0 + r1, acknowledged_ + ok.load());
}

TEST_F(ProxyBalancingTest, ErrorStatusesPassThroughUnchanged) {
  // What plumbd itself answers for a set it does not have...
  const v1::ScoreRequest unknown = Parcel("parcels", 1);
  std::unique_ptr<v1::Scoring::Stub> direct =
      testing::NewScoringStub(replicas_[1]->addr());
  const grpc::Status from_plumbd = Score(direct.get(), unknown);
  ASSERT_EQ(from_plumbd.error_code(), grpc::StatusCode::NOT_FOUND)
      << from_plumbd.error_message();
  // ...is what the caller gets through haproxy, from either replica.
  for (int i = 0; i < 4; ++i) {
    const grpc::Status via_proxy = Score(stub_.get(), unknown);
    EXPECT_EQ(via_proxy.error_code(), from_plumbd.error_code());
    EXPECT_EQ(via_proxy.error_message(), from_plumbd.error_message());
  }
}

}  // namespace
}  // namespace plumbline::daemon
