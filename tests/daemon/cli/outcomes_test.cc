// File: tests/daemon/cli/outcomes_test.cc
//
// plumbctl outcomes --csv and plumbctl outcome against a running plumbd:
// the counts, the refusal listing (capped on the terminal, complete in
// --refusals_out), exit codes for a file of the wrong shape (2) and an
// unreachable daemon (1).
#include <grpcpp/client_context.h>
#include <signal.h>

#include <filesystem>
#include <string>
#include <vector>

#include "absl/strings/match.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_split.h"
#include "daemon/csv/table.h"
#include "gmock/gmock.h"
#include "gtest/gtest.h"
#include "tests/testing/process.h"
#include "tests/testing/test_sets.h"

namespace plumbline::daemon {
namespace {

using ::testing::HasSubstr;
using ::testing::Not;
using testing::PlumbdProcess;
using testing::ProcessResult;
using testing::ReadTextFile;
using ::testing::StartsWith;
using testing::TempDir;
using testing::WriteTextFile;

class PlumbctlOutcomesTest : public ::testing::Test {
 protected:
  void SetUp() override {
    std::filesystem::create_directory(dir_.File("sets"));
    ASSERT_TRUE(WriteTextFile(dir_.File("sets/courier.json"),
                              testing::CourierSetJson("courier", "v1"))
                    .ok());
    absl::StatusOr<std::unique_ptr<PlumbdProcess>> plumbd =
        PlumbdProcess::Start(dir_.path(), {"--sets", dir_.File("sets"),
                                           "--ledger", dir_.File("ledger.db")});
    ASSERT_TRUE(plumbd.ok()) << plumbd.status();
    plumbd_ = *std::move(plumbd);
    // Scored records o-1 .. o-30.
    v1::ScoreBatchRequest request;
    request.set_set("courier");
    for (int i = 1; i <= 30; ++i) {
      v1::Record* record = request.add_records();
      record->set_record_id(absl::StrCat("o-", i));
      (*record->mutable_features()->mutable_fields())["distance_km"]
          .set_number_value(i);
    }
    grpc::ClientContext context;
    v1::ScoreBatchReply reply;
    grpc::Status status = testing::NewScoringStub(plumbd_->addr())
                              ->ScoreBatch(&context, request, &reply);
    ASSERT_TRUE(status.ok()) << status.error_message();
  }
  void TearDown() override { plumbd_.reset(); }

  ProcessResult Plumbctl(std::vector<std::string> args,
                         const std::string& addr = "") {
    args.insert(args.begin(), {PLUMBCTL_PATH, "--addr",
                               addr.empty() ? plumbd_->addr() : addr});
    absl::StatusOr<ProcessResult> result =
        testing::RunProcess(args, dir_.path());
    EXPECT_TRUE(result.ok()) << result.status();
    return result.ok() ? *result : ProcessResult();
  }

  TempDir dir_;
  std::unique_ptr<PlumbdProcess> plumbd_;
};

TEST_F(PlumbctlOutcomesTest, ReportsCountsAndListsRefusals) {
  // 30 known ids accepted; refused: 22 unknown ids, 1 bad label (locally),
  // 1 different label for o-1 (reported as 1 earlier in the file), 1 bad
  // observed_at (locally). 25 refusals: 20 listed, 5 counted.
  std::string csv = "record_id,label,observed_at\n";
  for (int i = 1; i <= 30; ++i) {
    absl::StrAppend(&csv, "o-", i, ",", i % 2,
                    i == 2 ? ",2026-12-01T08:30:00Z" : ",", "\n");
  }
  for (int i = 1; i <= 22; ++i) absl::StrAppend(&csv, "ghost-", i, ",1,\n");
  absl::StrAppend(&csv, "o-3,maybe,\n", "o-1,0,\n", "o-4,1,noonish\n");
  ASSERT_TRUE(WriteTextFile(dir_.File("outcomes.csv"), csv).ok());

  const ProcessResult run =
      Plumbctl({"outcomes", "--csv", dir_.File("outcomes.csv"), "--batch", "7",
                "--refusals_out", dir_.File("refused.csv")});
  ASSERT_EQ(run.exit_code, 0) << run.out << run.err;
  const std::vector<std::string> lines = absl::StrSplit(run.out, '\n');
  ASSERT_GE(lines.size(), 3u) << run.out;
  EXPECT_EQ(lines[0], "accepted 30, refused 25");
  EXPECT_THAT(lines[1], StartsWith("RECORD_ID"));
  EXPECT_THAT(lines[2], StartsWith("ghost-1 "));
  EXPECT_THAT(lines[2], HasSubstr("NOT_FOUND"));
  EXPECT_THAT(lines[2], HasSubstr("no score with record_id 'ghost-1'"));
  EXPECT_THAT(run.out,
              HasSubstr("... and 5 more in " + dir_.File("refused.csv")));
  EXPECT_THAT(run.out, Not(HasSubstr("ghost-21")));  // beyond the 20 listed

  absl::StatusOr<CsvTable> refused =
      ParseCsv(ReadTextFile(dir_.File("refused.csv")), "refused.csv");
  ASSERT_TRUE(refused.ok()) << refused.status();
  ASSERT_EQ(refused->rows.size(), 25u);
  EXPECT_EQ(refused->rows[21][0], "ghost-22");
  EXPECT_EQ(refused->rows[22],
            (std::vector<std::string>{"o-3", "54", "INVALID_ARGUMENT",
                                      "label 'maybe' is not 0 or 1"}));
  EXPECT_EQ(refused->rows[23][0], "o-1");
  EXPECT_EQ(refused->rows[23][2], "FAILED_PRECONDITION");
  EXPECT_EQ(refused->rows[24][0], "o-4");
  EXPECT_THAT(refused->rows[24][3], HasSubstr("observed_at 'noonish'"));

  // Again: all 30 known ones are now repeats, still accepted.
  const ProcessResult again =
      Plumbctl({"outcomes", "--csv", dir_.File("outcomes.csv")});
  ASSERT_EQ(again.exit_code, 0) << again.err;
  EXPECT_THAT(again.out, StartsWith("accepted 30, refused 25\n"
                                    "(30 of the accepted had been recorded "
                                    "before with the same label)\n"));
  EXPECT_THAT(again.out,
              HasSubstr("... and 5 more; --refusals_out FILE writes them all"));
}

TEST_F(PlumbctlOutcomesTest, WrongShapeIsAUsageErrorAndDeadDaemonExit1) {
  ASSERT_TRUE(WriteTextFile(dir_.File("extra.csv"),
                            "record_id,label,channel,weight\no-1,1,web,3\n")
                  .ok());
  ProcessResult run = Plumbctl({"outcomes", "--csv", dir_.File("extra.csv")});
  EXPECT_EQ(run.exit_code, 2);
  EXPECT_THAT(run.err, HasSubstr("unexpected column(s) 'channel', 'weight'"));

  ASSERT_TRUE(
      WriteTextFile(dir_.File("ok.csv"), "record_id,label\no-1,1\n").ok());
  run = Plumbctl({"outcomes", "--csv", dir_.File("ok.csv")});
  ASSERT_EQ(run.exit_code, 0) << run.err;
  EXPECT_EQ(run.out, "accepted 1, refused 0\n");

  // The daemon gone: the call fails, exit 1, and nothing is claimed.
  const std::string addr = plumbd_->addr();
  plumbd_->Signal(SIGKILL);
  ASSERT_TRUE(plumbd_->WaitForExit().ok());
  run = Plumbctl(
      {"--timeout_ms", "3000", "outcomes", "--csv", dir_.File("ok.csv")}, addr);
  EXPECT_EQ(run.exit_code, 1);
  EXPECT_THAT(run.err, HasSubstr("plumbctl: UNAVAILABLE: "));
  EXPECT_THAT(run.out, StartsWith("accepted 0, refused 0\n"));
  EXPECT_THAT(run.out, HasSubstr("stopped at line 2"));
}

TEST_F(PlumbctlOutcomesTest, OneOutcome) {
  ProcessResult run = Plumbctl({"outcome", "--record_id", "o-5", "--label", "1",
                                "--observed_at", "1796113800"});
  ASSERT_EQ(run.exit_code, 0) << run.err;
  EXPECT_EQ(run.out, "accepted\n");
  run = Plumbctl({"outcome", "--record-id", "o-5", "--label", "1"});
  ASSERT_EQ(run.exit_code, 0) << run.err;
  EXPECT_EQ(run.out, "accepted (the same label had been recorded before)\n");
  run = Plumbctl({"outcome", "--record_id", "o-5", "--label", "0"});
  EXPECT_EQ(run.exit_code, 1);
  EXPECT_THAT(run.err,
              HasSubstr("plumbctl: FAILED_PRECONDITION: record 'o-5'"));
  run = Plumbctl({"outcome", "--record_id", "nobody", "--label", "0"});
  EXPECT_EQ(run.exit_code, 1);
  EXPECT_THAT(run.err, HasSubstr("plumbctl: NOT_FOUND: "));
  run = Plumbctl({"outcome", "--record_id", "o-6", "--label", "yes"});
  EXPECT_EQ(run.exit_code, 2);
  EXPECT_THAT(run.err, HasSubstr("--label: label 'yes' is not 0 or 1"));
}

}  // namespace
}  // namespace plumbline::daemon
