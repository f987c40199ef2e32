// File: tests/daemon/cli/score_csv_test.cc
//
// plumbctl's CSV scoring through a running plumbd must give exactly the same
// text as offline scoring of the same CSV with the set file (both print
// %.17g of the same doubles), including categorical columns, missing cells,
// pass-through columns, reasons and record ids.
#include <filesystem>

#include "absl/strings/match.h"
#include "absl/strings/str_cat.h"
#include "daemon/csv/table.h"
#include "gmock/gmock.h"
#include "gtest/gtest.h"
#include "tests/testing/process.h"
#include "tests/testing/test_sets.h"

namespace plumbline::daemon {
namespace {

using ::testing::ElementsAre;
using ::testing::HasSubstr;
using ::testing::MatchesRegex;
using testing::PlumbdProcess;
using testing::ProcessResult;
using testing::ReadTextFile;
using testing::RunProcess;
using testing::TempDir;
using testing::WriteTextFile;

// Categorical cells, an unseen service level, empty (missing) cells of every
// rule, a quoted pass-through column with a comma, and 7 rows so that
// --batch 3 makes three batches.
constexpr char kCsvWithIds[] =
    "record_id,distance_km,parcel_kg,region,service,hour,note\n"
    "p-001,9,,rural,overnight,18,\"ring twice, then leave\"\n"
    "p-002,50,1.5,,express,,\n"
    "p-003,2,2,urban,standard,9,back door\n"
    "p-004,5.5,,suburban,,11.99,\n"
    "p-005,0.25,7,rural,express,17,\"says \"\"fragile\"\"\"\n"
    "p-006,12,0,urban,,,\n"
    "p-007,3,2.5,,standard,23,\n";

class PlumbctlCsvTest : public ::testing::Test {
 protected:
  void SetUp() override {
    std::filesystem::create_directory(dir_.File("sets"));
    set_file_ = dir_.File("sets/courier.json");
    ASSERT_TRUE(
        WriteTextFile(set_file_, testing::CourierSetJson("courier", "v1"))
            .ok());
    absl::StatusOr<std::unique_ptr<PlumbdProcess>> plumbd =
        PlumbdProcess::Start(dir_.path(), {"--sets", dir_.File("sets"),
                                           "--ledger", dir_.File("ledger.db")});
    ASSERT_TRUE(plumbd.ok()) << plumbd.status();
    plumbd_ = *std::move(plumbd);
  }
  void TearDown() override { plumbd_.reset(); }

  ProcessResult Plumbctl(std::vector<std::string> args) {
    args.insert(args.begin(), PLUMBCTL_PATH);
    absl::StatusOr<ProcessResult> result = RunProcess(args, dir_.path());
    EXPECT_TRUE(result.ok()) << result.status();
    return result.ok() ? *result : ProcessResult();
  }
  ProcessResult Online(const std::string& csv, const std::string& out,
                       std::vector<std::string> extra = {}) {
    std::vector<std::string> args = {"score", "--addr",  plumbd_->addr(),
                                     "--set", "courier", "--csv",
                                     csv,     "--out",   out};
    args.insert(args.end(), extra.begin(), extra.end());
    return Plumbctl(args);
  }
  ProcessResult Offline(const std::string& csv, const std::string& out,
                        std::vector<std::string> extra = {}) {
    std::vector<std::string> args = {"score", "--set-file", set_file_, "--csv",
                                     csv,     "--out",      out};
    args.insert(args.end(), extra.begin(), extra.end());
    return Plumbctl(args);
  }
  CsvTable ReadCsv(const std::string& path) {
    absl::StatusOr<CsvTable> table = ParseCsv(ReadTextFile(path), path);
    EXPECT_TRUE(table.ok()) << table.status();
    return table.ok() ? *table : CsvTable();
  }

  TempDir dir_;
  std::string set_file_;
  std::unique_ptr<PlumbdProcess> plumbd_;
};

TEST_F(PlumbctlCsvTest, OnlineAndOfflineGiveIdenticalText) {
  const std::string csv = dir_.File("parcels.csv");
  ASSERT_TRUE(WriteTextFile(csv, kCsvWithIds).ok());
  const ProcessResult online =
      Online(csv, dir_.File("online.csv"), {"--batch", "3", "--reasons", "2"});
  ASSERT_EQ(online.exit_code, 0) << online.err;
  EXPECT_THAT(online.err, HasSubstr("scored 7 records in 3 batches"));
  const ProcessResult offline = Offline(csv, dir_.File("offline.csv"),
                                        {"--batch", "3", "--reasons", "2"});
  ASSERT_EQ(offline.exit_code, 0) << offline.err;
  EXPECT_THAT(offline.err, HasSubstr("scored 7 records in 3 batches"));

  const std::string online_text = ReadTextFile(dir_.File("online.csv"));
  EXPECT_EQ(online_text, ReadTextFile(dir_.File("offline.csv")));

  const CsvTable table = ReadCsv(dir_.File("online.csv"));
  EXPECT_THAT(table.header,
              ElementsAre("record_id", "distance_km", "parcel_kg", "region",
                          "service", "hour", "note", "log_odds", "probability",
                          "reason_1", "reason_2"));
  ASSERT_EQ(table.rows.size(), 7u);
  for (size_t r = 0; r < table.rows.size(); ++r) {
    EXPECT_EQ(table.rows[r][0], absl::StrCat("p-00", r + 1));  // ids kept
  }
  EXPECT_EQ(table.rows[0][6], "ring twice, then leave");  // passed through
  EXPECT_EQ(table.rows[4][6], "says \"fragile\"");
  // Row p-001 is record A of the integration test; its first reason is
  // distance_km, hand computation 0.8 * (9 - 5) / 2.5.
  EXPECT_THAT(table.rows[0][9], MatchesRegex("distance_km:1\\.28.*"));
}

TEST_F(PlumbctlCsvTest, GeneratedIdsWhenThereIsNoRecordIdColumn) {
  const std::string csv = dir_.File("noids.csv");
  ASSERT_TRUE(WriteTextFile(csv,
                            "distance_km,region,hour\n"
                            "9,rural,18\n"
                            "2,,\n")
                  .ok());
  ASSERT_EQ(Online(csv, dir_.File("online.csv")).exit_code, 0);
  ASSERT_EQ(Offline(csv, dir_.File("offline.csv")).exit_code, 0);
  const CsvTable online = ReadCsv(dir_.File("online.csv"));
  const CsvTable offline = ReadCsv(dir_.File("offline.csv"));
  EXPECT_THAT(online.header,
              ElementsAre("distance_km", "region", "hour", "record_id",
                          "log_odds", "probability"));
  ASSERT_EQ(online.rows.size(), 2u);
  ASSERT_EQ(offline.rows.size(), 2u);
  for (size_t r = 0; r < 2; ++r) {
    // "<file stem>-<unix seconds>-<row>"
    EXPECT_THAT(online.rows[r][3],
                MatchesRegex(absl::StrCat("noids-[0-9]+-", r + 1)));
    EXPECT_EQ(online.rows[r][4], offline.rows[r][4]);  // log_odds, same text
    EXPECT_EQ(online.rows[r][5], offline.rows[r][5]);  // probability
  }
}

TEST_F(PlumbctlCsvTest, UnparseableCellFailsNamingRowAndColumnWritingNothing) {
  const std::string csv = dir_.File("bad.csv");
  ASSERT_TRUE(WriteTextFile(csv,
                            "distance_km,hour\n"
                            "9,18\n"
                            "4,late\n")
                  .ok());
  for (const bool online : {true, false}) {
    const std::string out = dir_.File(online ? "on.csv" : "off.csv");
    const ProcessResult result = online ? Online(csv, out) : Offline(csv, out);
    EXPECT_EQ(result.exit_code, 1);
    EXPECT_THAT(result.err,
                HasSubstr("plumbctl: INVALID_ARGUMENT: " + csv +
                          ": row 2 (line 3), column 'hour': 'late' is not a "
                          "number"));
    EXPECT_FALSE(std::filesystem::exists(out));
  }
}

TEST_F(PlumbctlCsvTest, RecordTheDaemonRefusesFailsTheRunWritingNothing) {
  const std::string csv = dir_.File("refused.csv");
  // distance_km is REJECT: the empty cell in row 2 is refused.
  ASSERT_TRUE(WriteTextFile(csv, "record_id,distance_km\na,9\nb,\n").ok());
  const ProcessResult result = Online(csv, dir_.File("out.csv"));
  EXPECT_EQ(result.exit_code, 1);
  EXPECT_THAT(result.err, HasSubstr("plumbctl: INVALID_ARGUMENT: "));
  EXPECT_THAT(result.err, HasSubstr("(id 'b'): feature 'distance_km'"));
  EXPECT_FALSE(std::filesystem::exists(dir_.File("out.csv")));
}

TEST_F(PlumbctlCsvTest, ScoreJsonAndSetsAndErrors) {
  const ProcessResult score = Plumbctl(
      {"score", "--addr", plumbd_->addr(), "--set", "courier", "--json",
       R"({"distance_km": 9, "region": "rural", "hour": 18})", "--record_id",
       "j-1", "--reasons", "2"});
  ASSERT_EQ(score.exit_code, 0) << score.err;
  EXPECT_THAT(score.out, HasSubstr("record_id    j-1"));
  EXPECT_THAT(score.out, HasSubstr("version      v1"));
  EXPECT_THAT(score.out, HasSubstr("reasons"));

  const ProcessResult sets =
      Plumbctl({"sets", "--addr", plumbd_->addr(), "--verbose"});
  ASSERT_EQ(sets.exit_code, 0) << sets.err;
  EXPECT_THAT(sets.out, HasSubstr("courier"));
  EXPECT_THAT(sets.out, HasSubstr(set_file_));
  EXPECT_THAT(sets.out, HasSubstr("urban, suburban, rural"));

  const ProcessResult unknown = Plumbctl(
      {"score", "--addr", plumbd_->addr(), "--set", "nope", "--json", "{}"});
  EXPECT_EQ(unknown.exit_code, 1);
  EXPECT_THAT(
      unknown.err,
      HasSubstr("plumbctl: NOT_FOUND: no coefficient set named 'nope'"));

  const ProcessResult usage = Plumbctl({"score", "--json", "{}"});
  EXPECT_EQ(usage.exit_code, 2);
  EXPECT_THAT(usage.err, HasSubstr("usage: plumbctl"));
  EXPECT_EQ(Plumbctl({"frobnicate"}).exit_code, 2);
  EXPECT_EQ(Plumbctl({"sets", "--no_such_flag"}).exit_code, 2);
}

}  // namespace
}  // namespace plumbline::daemon
