// File: tests/bench/grpc_load_test.cc
//
// Keeps tests/bench/grpc_load from rotting: runs it for about a second per
// shape against a real plumbd (ephemeral ports, temp ledger) and checks what
// it counted against what plumbd did: every reply OK, every floor reply
// NOT_FOUND, and exactly the OK records in the ledger under the run's ids
// (none of the floor's). No timing is asserted.
#include <csignal>
#include <map>
#include <memory>
#include <string>
#include <vector>

#include "absl/strings/numbers.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_split.h"
#include "daemon/ledger/sqlite_db.h"
#include "gtest/gtest.h"
#include "tests/testing/process.h"
#include "tests/testing/status_matchers.h"

namespace plumbline::bench {
namespace {

using daemon::testing::PlumbdProcess;
using daemon::testing::PollUntil;
using daemon::testing::RunProcess;
using daemon::testing::TempDir;

// key=value lines of grpc_load --result_file.
std::map<std::string, int64_t> ReadResult(const std::string& path) {
  std::map<std::string, int64_t> result;
  for (absl::string_view line : absl::StrSplit(
           daemon::testing::ReadTextFile(path), '\n', absl::SkipEmpty())) {
    std::pair<std::string, std::string> kv = absl::StrSplit(line, '=');
    int64_t n = 0;
    if (absl::SimpleAtoi(kv.second, &n)) result[kv.first] = n;
  }
  return result;
}

class GrpcLoadTest : public ::testing::Test {
 protected:
  void SetUp() override {
    auto sets = RunProcess(
        {GRPC_LOAD_PATH, "--write_sets", dir_.File("sets"), "--widths", "10"},
        dir_.path());
    ASSERT_OK(sets.status());
    ASSERT_EQ(sets->exit_code, 0) << sets->err;
    ASSERT_OK_AND_ASSIGN(
        plumbd_,
        PlumbdProcess::Start(dir_.path(), {"--sets", dir_.File("sets"),
                                           "--ledger", dir_.File("ledger.db"),
                                           "--metrics_listen", "127.0.0.1:0"}));
    ASSERT_TRUE(PollUntil([&] { return !plumbd_->MetricsAddress().empty(); }))
        << plumbd_->Log();
  }

  // Runs grpc_load with `args` plus the daemon's addresses and pid; its
  // result file.
  std::map<std::string, int64_t> Load(const std::string& name,
                                      std::vector<std::string> args) {
    const std::string result = dir_.File(name + ".result");
    std::vector<std::string> argv = {GRPC_LOAD_PATH,
                                     "--addr",
                                     plumbd_->addr(),
                                     "--pid",
                                     absl::StrCat(plumbd_->pid()),
                                     "--metrics_addr",
                                     plumbd_->MetricsAddress(),
                                     "--id_prefix",
                                     name,
                                     "--result_file",
                                     result,
                                     "--seconds",
                                     "0.5",
                                     "--warmup_seconds",
                                     "0"};
    argv.insert(argv.end(), args.begin(), args.end());
    auto run = RunProcess(argv, dir_.path());
    EXPECT_OK(run.status());
    if (!run.ok()) return {};
    EXPECT_EQ(run->exit_code, 0) << run->err;
    // The table row: the floor's and the scenario's.
    EXPECT_NE(run->out.find(" floor "), std::string::npos) << run->out;
    return ReadResult(result);
  }

  int64_t LedgerRows(const std::string& like) {
    auto db = daemon::SqliteDb::Open(dir_.File("ledger.db"));
    EXPECT_OK(db.status());
    if (!db.ok()) return -1;
    auto n = (*db)->QueryInt64(absl::StrCat(
        "SELECT count(*) FROM ledger_scores WHERE record_id LIKE '", like,
        "'"));
    EXPECT_OK(n.status());
    return n.ok() ? *n : -1;
  }

  TempDir dir_;
  std::unique_ptr<PlumbdProcess> plumbd_;
};

TEST_F(GrpcLoadTest, CountsOkRepliesAndTheLedgerGetsTheRows) {
  std::map<std::string, int64_t> dense =
      Load("dense", {"--set", "courier_mixed", "--rpc", "batch_dense",
                     "--records", "50", "--callers", "2"});
  std::map<std::string, int64_t> named =
      Load("named", {"--set", "parcel_wide_10", "--rpc", "batch_named",
                     "--records", "20", "--callers", "1"});
  std::map<std::string, int64_t> unary =
      Load("unary", {"--rpc", "score", "--rate", "200"});

  for (auto* r : {&dense, &named, &unary}) {
    EXPECT_GT((*r)["ok_calls"], 0);
    EXPECT_EQ((*r)["ok_calls"], (*r)["calls"]);  // nothing but OK
    EXPECT_EQ((*r)["ok_records"], (*r)["records"]);
    EXPECT_EQ((*r)["not_sent"], 0);
    EXPECT_GT((*r)["floor_calls"], 0);
    EXPECT_EQ((*r)["floor_not_found"], (*r)["floor_calls"]);
  }
  EXPECT_EQ(dense["ok_records"], dense["ok_calls"] * 50);
  EXPECT_EQ(named["ok_records"], named["ok_calls"] * 20);
  EXPECT_EQ(unary["ok_records"], unary["ok_calls"]);

  // Stopped first, so every acknowledged row is in the file (no warm-up:
  // every call sent was counted).
  plumbd_->Signal(SIGTERM);
  ASSERT_OK_AND_ASSIGN(int exit_code, plumbd_->WaitForExit());
  EXPECT_EQ(exit_code, 0);
  EXPECT_EQ(LedgerRows("dense-%"), dense["ok_records"]);
  EXPECT_EQ(LedgerRows("named-%"), named["ok_records"]);
  EXPECT_EQ(LedgerRows("unary-%"), unary["ok_records"]);
  EXPECT_EQ(LedgerRows("%-floor-%"), 0);
}

}  // namespace
}  // namespace plumbline::bench
