// File: tests/ops/deb_package_test.cc
//
// The plumbd and plumbctl the Debian package installed (ctest
// ops.deb_install, tests/ops/check_deb.sh, writes the scratch root named by
// PLUMBLINE_DEB_ROOT): the installed plumbd starts with the installed
// sample config (/etc/plumbline/plumbd.json) on a free port, answers gRPC
// health checking, and the installed plumbctl lists and scores a set
// through it.
#include <cstdlib>
#include <filesystem>
#include <memory>
#include <string>

#include "absl/cleanup/cleanup.h"
#include "absl/strings/str_cat.h"
#include "gmock/gmock.h"
#include "gtest/gtest.h"
#include "tests/testing/process.h"
#include "tests/testing/test_sets.h"

namespace plumbline::daemon {
namespace {

using ::testing::HasSubstr;

TEST(DebPackageTest, InstalledPlumbdServesTheSampleConfig) {
  const char* root_env = std::getenv("PLUMBLINE_DEB_ROOT");
  ASSERT_NE(root_env, nullptr) << "PLUMBLINE_DEB_ROOT is not set";
  const std::string root = root_env;
  const std::string plumbd = root + "/usr/bin/plumbd";
  const std::string plumbctl = root + "/usr/bin/plumbctl";
  ASSERT_TRUE(std::filesystem::exists(plumbd)) << plumbd;

  testing::TempDir dir;
  // The sample config as installed; only what points at the machine's own
  // /etc and /var is redirected: the sets directory to the scratch root's,
  // the ledger to a temp file, the ports (in the config: 7390, 7391) to
  // free ones (PlumbdProcess adds --listen 127.0.0.1:0).
  const std::string sets = root + "/etc/plumbline/sets";
  ASSERT_TRUE(testing::WriteTextFile(sets + "/courier.json",
                                     testing::CourierSetJson("courier", "v1"))
                  .ok());
  // ops.deb_purge then finds the directory as the package left it.
  absl::Cleanup remove_set = [&] {
    std::filesystem::remove(sets + "/courier.json");
  };
  absl::StatusOr<std::unique_ptr<testing::PlumbdProcess>> daemon =
      testing::PlumbdProcess::StartBinary(
          plumbd, dir.path(),
          {"--config", root + "/etc/plumbline/plumbd.json", "--sets", sets,
           "--ledger", dir.File("ledger.db"), "--metrics_listen",
           "127.0.0.1:0"});
  ASSERT_TRUE(daemon.ok()) << daemon.status();

  for (const char* service : {"", "plumbline.v1.Scoring", "courier"}) {
    grpc::ClientContext context;
    grpc::health::v1::HealthCheckRequest request;
    request.set_service(service);
    grpc::health::v1::HealthCheckResponse response;
    const grpc::Status status = testing::NewHealthStub((*daemon)->addr())
                                    ->Check(&context, request, &response);
    ASSERT_TRUE(status.ok()) << service << ": " << status.error_message();
    EXPECT_EQ(response.status(), grpc::health::v1::HealthCheckResponse::SERVING)
        << service;
  }

  absl::StatusOr<testing::ProcessResult> listed = testing::RunProcess(
      {plumbctl, "sets", "--addr", (*daemon)->addr()}, dir.path());
  ASSERT_TRUE(listed.ok()) << listed.status();
  EXPECT_EQ(listed->exit_code, 0) << listed->err;
  EXPECT_THAT(listed->out, HasSubstr("courier"));
}

}  // namespace
}  // namespace plumbline::daemon
