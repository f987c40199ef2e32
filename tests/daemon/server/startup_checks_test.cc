// File: tests/daemon/server/startup_checks_test.cc
//
// Configurations plumbd used to accept silently although they could not
// work as written, run through the real plumbd: each is now refused at
// startup with a message naming the field, or (unreadable set files)
// reported with a log line naming each entry. And a Unix-socket listen
// address writes the socket's address to the ready file.
#include <grpcpp/client_context.h>
#include <signal.h>
#include <sys/wait.h>

#include <filesystem>
#include <string>
#include <vector>

#include "absl/strings/str_cat.h"
#include "absl/strings/strip.h"
#include "gmock/gmock.h"
#include "gtest/gtest.h"
#include "tests/testing/process.h"
#include "tests/testing/security_testing.h"
#include "tests/testing/test_sets.h"

namespace plumbline::daemon {
namespace {

using ::testing::HasSubstr;
using testing::PlumbdProcess;
using testing::TempDir;
using testing::WriteTextFile;

class StartupChecksTest : public ::testing::Test {
 protected:
  void SetUp() override {
    std::filesystem::create_directory(dir_.File("sets"));
    ASSERT_TRUE(WriteTextFile(dir_.File("sets/courier.json"),
                              testing::CourierSetJson("courier", "v1"))
                    .ok());
  }

  // Runs plumbd with `config` (JSON members after sets_dir and
  // ledger_path), which it must refuse: waits (with PollUntil's deadline)
  // until it exits, or kills it once it reports ready, a failure.
  testing::ProcessResult RunRefused(const std::string& config_members) {
    const std::string config =
        absl::StrCat(R"({"sets_dir": ")", dir_.File("sets"),
                     R"(", "ledger_path": ")", dir_.File("ledger.db"),
                     R"(", "listen": "127.0.0.1:0", )", config_members, "}");
    EXPECT_TRUE(WriteTextFile(dir_.File("plumbd.json"), config).ok());
    const std::string ready = dir_.File("plumbd.ready");
    const std::string log = dir_.File("refused.log");
    absl::StatusOr<pid_t> pid =
        testing::Spawn({PLUMBD_PATH, "--config", dir_.File("plumbd.json"),
                        "--ready_file", ready},
                       {log, log, dir_.path(), /*append=*/false});
    EXPECT_TRUE(pid.ok()) << pid.status();
    if (!pid.ok()) return {};
    int status = 0;
    bool exited = false;
    testing::PollUntil([&] {
      if (waitpid(*pid, &status, WNOHANG) == *pid) {
        exited = true;
        return true;
      }
      return std::filesystem::exists(ready);
    });
    if (!exited) {
      kill(*pid, SIGKILL);
      waitpid(*pid, &status, 0);
    }
    testing::ProcessResult result;
    result.exit_code = exited && WIFEXITED(status) ? WEXITSTATUS(status) : -1;
    result.err = testing::ReadTextFile(log);
    EXPECT_TRUE(exited) << "plumbd started with a config it must refuse";
    EXPECT_NE(result.exit_code, 0) << result.err;
    return result;
  }

  TempDir dir_;
};

TEST_F(StartupChecksTest, SubjectsWithoutMutualTlsAreAConfigError) {
  const testing::ProcessResult r = RunRefused(
      R"("security": {"access": {"subjects": [
           {"common_name": "router-1", "role": "SCORE"}]}})");
  EXPECT_THAT(r.err, HasSubstr("security.access.subjects"));
  EXPECT_THAT(r.err, HasSubstr("mutual TLS is off"));
}

TEST_F(StartupChecksTest, OpenMetricsOffLoopbackNeedAuthOrAnExplicitFlag) {
  const testing::ProcessResult r =
      RunRefused(R"("metrics_listen": "0.0.0.0:0")");
  EXPECT_THAT(r.err, HasSubstr("metrics_listen: refusing to serve metrics "
                               "without a password on 0.0.0.0:0"));
  EXPECT_THAT(r.err,
              HasSubstr("security.allow_unauthenticated_metrics_non_loopback"));

  // The explicit flag lets it start.
  ASSERT_TRUE(WriteTextFile(
                  dir_.File("allowed.json"),
                  absl::StrCat(R"({"sets_dir": ")", dir_.File("sets"),
                               R"(", "ledger_path": ")", dir_.File("ledger.db"),
                               R"(", "metrics_listen": "0.0.0.0:0",
              "security": {"allow_unauthenticated_metrics_non_loopback": true}})"))
                  .ok());
  absl::StatusOr<std::unique_ptr<PlumbdProcess>> plumbd = PlumbdProcess::Start(
      dir_.path(), {"--config", dir_.File("allowed.json")});
  ASSERT_TRUE(plumbd.ok()) << plumbd.status();
}

TEST_F(StartupChecksTest, ATinyMessageLimitNamesTheField) {
  const testing::ProcessResult r = RunRefused(R"("max_message_bytes": 10)");
  EXPECT_THAT(r.err, HasSubstr("max_message_bytes: 10 is below the floor of "
                               "65536 bytes"));
}

TEST_F(StartupChecksTest, UnreadableSetEntriesAreLoggedByName) {
  // A directory and a broken symbolic link named like set files (a file
  // without read permission is no test when the suite runs as root).
  std::filesystem::create_directory(dir_.File("sets/folder.json"));
  std::filesystem::create_symlink(dir_.File("nowhere.json"),
                                  dir_.File("sets/dangling.json"));
  absl::StatusOr<std::unique_ptr<PlumbdProcess>> plumbd = PlumbdProcess::Start(
      dir_.path(),
      {"--sets", dir_.File("sets"), "--ledger", dir_.File("ledger.db")});
  ASSERT_TRUE(plumbd.ok()) << plumbd.status();
  const std::string log = (*plumbd)->Log();
  EXPECT_THAT(log, HasSubstr(absl::StrCat("event=set_file_skipped file=",
                                          dir_.File("sets/folder.json"))));
  EXPECT_THAT(log, HasSubstr(absl::StrCat("event=set_file_skipped file=",
                                          dir_.File("sets/dangling.json"))));
  EXPECT_THAT(log, HasSubstr("event=listening"));
  EXPECT_THAT(log, HasSubstr("sets=1"));  // courier still serves
}

TEST_F(StartupChecksTest, AUnixSocketReadyFileSaysTheSocket) {
  const std::string socket = absl::StrCat("unix:", dir_.File("plumbd.sock"));
  absl::StatusOr<std::unique_ptr<PlumbdProcess>> plumbd = PlumbdProcess::Start(
      dir_.path(),
      {"--sets", dir_.File("sets"), "--ledger", dir_.File("ledger.db"),
       "--listen", socket, "--metrics_listen", "127.0.0.1:0"});
  ASSERT_TRUE(plumbd.ok()) << plumbd.status();
  EXPECT_EQ((*plumbd)->addr(), socket);
  // And it is the address a client dials.
  auto stub = testing::NewScoringStub((*plumbd)->addr());
  grpc::ClientContext context;
  v1::ListSetsReply reply;
  const grpc::Status status =
      stub->ListSets(&context, v1::ListSetsRequest(), &reply);
  ASSERT_TRUE(status.ok()) << status.error_message();
  EXPECT_EQ(reply.sets_size(), 1);
}

}  // namespace
}  // namespace plumbline::daemon
