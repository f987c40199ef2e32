// File: tests/daemon/server/plumbd_test.cc
//
// A whole daemon in the test's own process (daemon/server/plumbd.h): start
// it on an ephemeral port, score over real gRPC, shut it down, tear it down
// (the ledger commits and closes), start a second one on the same ledger
// and find the row there. Also: option loading (flags over the config file)
// and a start that fails before any ledger file is created.
#include "daemon/server/plumbd.h"

#include <grpcpp/client_context.h>

#include <filesystem>
#include <memory>
#include <string>

#include "absl/strings/str_cat.h"
#include "absl/time/time.h"
#include "daemon/ledger/sqlite_db.h"
#include "gmock/gmock.h"
#include "google/protobuf/util/json_util.h"
#include "gtest/gtest.h"
#include "tests/testing/process.h"
#include "tests/testing/status_matchers.h"
#include "tests/testing/test_sets.h"

namespace plumbline::daemon {
namespace {

using ::plumbline::testing::StatusIs;
using testing::CourierSetJson;
using ::testing::HasSubstr;
using testing::TempDir;
using testing::WriteTextFile;

DaemonOptions TestOptions(const TempDir& dir) {
  DaemonOptions o;
  o.listen = "127.0.0.1:0";
  o.metrics_listen = "127.0.0.1:0";
  o.sets_dir = dir.File("sets");
  o.ledger.path = dir.File("ledger.db");
  return o;
}

grpc::Status ScoreOne(const std::string& addr, const std::string& record_id,
                      v1::ScoreReply* reply) {
  v1::ScoreRequest request;
  request.set_set("courier");
  request.mutable_record()->set_record_id(record_id);
  google::protobuf::Struct features;
  EXPECT_TRUE(google::protobuf::util::JsonStringToMessage(
                  R"({"distance_km": 9, "region": "rural"})", &features)
                  .ok());
  *request.mutable_record()->mutable_features() = features;
  grpc::ClientContext context;
  context.set_deadline(std::chrono::system_clock::now() +
                       std::chrono::seconds(10));
  return testing::NewScoringStub(addr)->Score(&context, request, reply);
}

TEST(PlumbdTest, ServesInProcessAndKeepsWhatItAcknowledgedAcrossARestart) {
  TempDir dir;
  std::filesystem::create_directory(dir.File("sets"));
  ASSERT_OK(WriteTextFile(dir.File("sets/courier.json"),
                          CourierSetJson("courier", "2026-11-01")));
  const std::string ready = dir.File("plumbd.ready");
  {
    ASSERT_OK_AND_ASSIGN(std::unique_ptr<Plumbd> plumbd,
                         Plumbd::Start(TestOptions(dir), ready));
    EXPECT_EQ(testing::ReadTextFile(ready),
              absl::StrCat(plumbd->bound_address(), "\n"));
    EXPECT_THAT(plumbd->metrics_address(), HasSubstr("127.0.0.1:"));
    v1::ScoreReply reply;
    grpc::Status s = ScoreOne(plumbd->bound_address(), "in-process-1", &reply);
    ASSERT_TRUE(s.ok()) << s.error_message();
    EXPECT_EQ(reply.score().record_id(), "in-process-1");
    plumbd->Shutdown(absl::Seconds(1));
    plumbd->Wait();
  }  // every part torn down in reverse order; the ledger is closed

  ASSERT_OK_AND_ASSIGN(std::unique_ptr<SqliteDb> db,
                       SqliteDb::Open(dir.File("ledger.db")));
  ASSERT_OK_AND_ASSIGN(
      int64_t rows,
      db->QueryInt64(
          "SELECT count(*) FROM scores WHERE record_id = 'in-process-1'"));
  EXPECT_EQ(rows, 1);
  db.reset();

  // A second daemon on the same ledger serves again; the destructor alone
  // (no Shutdown) stops it.
  ASSERT_OK_AND_ASSIGN(std::unique_ptr<Plumbd> again,
                       Plumbd::Start(TestOptions(dir)));
  v1::ScoreReply reply;
  EXPECT_TRUE(ScoreOne(again->bound_address(), "in-process-2", &reply).ok());
}

TEST(PlumbdTest, AMissingSetsDirectoryFailsBeforeTheLedgerIsCreated) {
  TempDir dir;
  EXPECT_THAT(
      Plumbd::Start(TestOptions(dir)),
      StatusIs(absl::StatusCode::kNotFound, HasSubstr("sets directory")));
  EXPECT_FALSE(std::filesystem::exists(dir.File("ledger.db")));
}

TEST(PlumbdTest, FlagsOverrideTheConfigFile) {
  TempDir dir;
  ASSERT_OK(WriteTextFile(dir.File("plumbd.json"),
                          R"({"listen": "127.0.0.1:7500",
                              "sets_dir": "/from/config",
                              "ledger_path": "/from/config.db"})"));
  PlumbdOverrides flags;
  flags.config_file = dir.File("plumbd.json");
  flags.sets_dir = "/from/flag";
  ASSERT_OK_AND_ASSIGN(DaemonOptions o, LoadPlumbdOptions(flags));
  EXPECT_EQ(o.listen, "127.0.0.1:7500");
  EXPECT_EQ(o.sets_dir, "/from/flag");
  EXPECT_EQ(o.ledger.path, "/from/config.db");
  EXPECT_EQ(o.metrics_listen, "127.0.0.1:7391");  // the default

  // An ephemeral gRPC port with no metrics address anywhere: metrics take a
  // free port too.
  PlumbdOverrides ephemeral;
  ephemeral.listen = "127.0.0.1:0";
  ASSERT_OK_AND_ASSIGN(DaemonOptions e, LoadPlumbdOptions(ephemeral));
  EXPECT_EQ(e.metrics_listen, "127.0.0.1:0");
}

TEST(PlumbdTest, ABadConfigFileIsAnErrorNamingIt) {
  TempDir dir;
  ASSERT_OK(WriteTextFile(dir.File("plumbd.json"), R"({"listen_typo": 1})"));
  PlumbdOverrides flags;
  flags.config_file = dir.File("plumbd.json");
  EXPECT_THAT(
      LoadPlumbdOptions(flags),
      StatusIs(absl::StatusCode::kInvalidArgument, HasSubstr("plumbd.json")));
}

}  // namespace
}  // namespace plumbline::daemon
