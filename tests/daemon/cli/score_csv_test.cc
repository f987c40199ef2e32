// File: tests/daemon/cli/score_csv_test.cc
//
// plumbctl's CSV scoring through a running plumbd must give exactly the same
// text as offline scoring of the same CSV with the set file (both print
// %.17g of the same doubles), including categorical columns, missing cells,
// pass-through columns, reasons and record ids.
#include <filesystem>

#include "absl/strings/match.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_format.h"
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
using ::testing::Not;
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
  // Whether plumbd's ledger holds `id` with these features: scoring it
  // again is then a repeat (Scored.repeat). Scoring an id that was not
  // recorded records it, so ask once per id.
  bool IsRecorded(const std::string& id, double distance_km,
                  const std::string& region = "") {
    std::string json = absl::StrCat(R"({"distance_km": )", distance_km);
    if (!region.empty())
      absl::StrAppend(&json, R"(, "region": ")", region, "\"");
    json += "}";
    const ProcessResult r =
        Plumbctl({"score", "--addr", plumbd_->addr(), "--set", "courier",
                  "--json", json, "--record_id", id, "--format", "json"});
    EXPECT_EQ(r.exit_code, 0) << r.err;
    return absl::StrContains(r.out, "\"repeat\": true");
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
    // "<file stem>-<unix microseconds>-<8 hex>-<n>"
    EXPECT_THAT(online.rows[r][3], MatchesRegex(absl::StrCat(
                                       "noids-[0-9]{16}-[0-9a-f]{8}-", r + 1)));
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

TEST_F(PlumbctlCsvTest, RecordTheSchemaRefusesFailsBeforeAnythingIsSent) {
  const std::string csv = dir_.File("refused.csv");
  // distance_km is REJECT: the empty cell in row 2 is refused by plumbctl
  // itself, from the set's summary, before any call.
  ASSERT_TRUE(WriteTextFile(csv, "record_id,distance_km\na,9\nb,\n").ok());
  const ProcessResult result = Online(csv, dir_.File("out.csv"));
  EXPECT_EQ(result.exit_code, 1);
  EXPECT_THAT(result.err,
              HasSubstr("plumbctl: INVALID_ARGUMENT: " + csv +
                        ": row 2 (line 3), column 'distance_km': a missing "
                        "value, and feature 'distance_km' of the set refuses "
                        "records without it"));
  EXPECT_FALSE(std::filesystem::exists(dir_.File("out.csv")));
  EXPECT_FALSE(std::filesystem::exists(dir_.File("out.csv.refused.csv")));
  EXPECT_FALSE(IsRecorded("a", 9));  // row 1 was not sent either
}

// 3000 parcels p-0001..p-3000 (ids in a record_id column); row `bad_row`
// gets `bad_cell` as its distance_km.
std::string Parcels(int bad_row = 0, const std::string& bad_cell = "") {
  std::string text = "record_id,distance_km,region,note\n";
  for (int r = 1; r <= 3000; ++r) {
    absl::StrAppend(&text, absl::StrFormat("p-%04d", r), ",",
                    r == bad_row ? bad_cell : absl::StrCat(1 + r % 37), ",",
                    r % 3 == 0 ? "rural" : "urban", ",n", r, "\n");
  }
  return text;
}

TEST_F(PlumbctlCsvTest, FailureOnlyPlumbdCanDecideAtRow2201IsResumable) {
  // p-2201 is already in the ledger with other features; plumbctl cannot
  // know that, plumbd refuses the third batch (rows 2001..3000) whole.
  ASSERT_EQ(
      Plumbctl({"score", "--addr", plumbd_->addr(), "--set", "courier",
                "--json", R"({"distance_km": 30})", "--record_id", "p-2201"})
          .exit_code,
      0);
  const std::string csv = dir_.File("parcels.csv");
  ASSERT_TRUE(WriteTextFile(csv, Parcels()).ok());
  const std::string out = dir_.File("scored.csv");
  const ProcessResult run = Online(csv, out);
  EXPECT_EQ(run.exit_code, 1);
  EXPECT_THAT(run.err, HasSubstr("plumbctl: ALREADY_EXISTS: " + csv +
                                 ": rows 2001..3000: record id 'p-2201'"));
  EXPECT_THAT(run.err,
              HasSubstr("wrote the 2000 rows scored before them to " + out +
                        " and the 1000 rows from row 2001 on "
                        "to " +
                        out + ".refused.csv"));
  const CsvTable scored = ReadCsv(out);
  ASSERT_EQ(scored.rows.size(), 2000u);
  EXPECT_EQ(scored.rows.back()[0], "p-2000");
  const CsvTable refused = ReadCsv(out + ".refused.csv");
  EXPECT_THAT(refused.header, ElementsAre("row", "record_id", "error",
                                          "distance_km", "region", "note"));
  ASSERT_EQ(refused.rows.size(), 1000u);
  EXPECT_EQ(refused.rows[0][0], "2001");
  EXPECT_EQ(refused.rows[0][1], "p-2001");
  EXPECT_THAT(refused.rows[0][2],
              HasSubstr("not recorded: the batch of rows 2001..3000 was "
                        "refused because of row 2201"));
  EXPECT_EQ(refused.rows[200][1], "p-2201");
  EXPECT_THAT(refused.rows[200][2],
              HasSubstr("ALREADY_EXISTS: record id 'p-2201' was already "
                        "scored"));
  // The ledger holds rows 1..2000 and nothing of 2001..3000.
  EXPECT_TRUE(IsRecorded("p-2000", 1 + 2000 % 37, "urban"));
  // (Asking records p-2001 with its own features: the resumed run below
  // gets it back as a repeat.)
  EXPECT_FALSE(IsRecorded("p-2001", 1 + 2001 % 37, "rural"));

  // Resume: give row 2201 a new id and score the refusals file.
  std::string resume = FormatCsvRow(refused.header);
  for (std::vector<std::string> row : refused.rows) {
    if (row[1] == "p-2201") row[1] = "p-2201b";
    resume += FormatCsvRow(row);
  }
  const std::string rest_csv = dir_.File("rest.csv");
  ASSERT_TRUE(WriteTextFile(rest_csv, resume).ok());
  const ProcessResult rest = Online(rest_csv, dir_.File("rest_scored.csv"));
  ASSERT_EQ(rest.exit_code, 0) << rest.err;
  EXPECT_THAT(rest.err, HasSubstr("scored 1000 records in 1 batch"));
  EXPECT_THAT(rest.err, HasSubstr("note: 1 record had been recorded before"));

  // The whole file again, p-2201 renamed: every row is a repeat, so each
  // was recorded exactly once (same id, same features).
  std::string fixed = Parcels();
  fixed.replace(fixed.find("p-2201,"), 7, "p-2201b,");
  ASSERT_TRUE(WriteTextFile(csv, fixed).ok());
  const ProcessResult again = Online(csv, dir_.File("again.csv"));
  ASSERT_EQ(again.exit_code, 0) << again.err;
  EXPECT_THAT(again.err, HasSubstr("note: 3000 records had been recorded "
                                   "before with the same id and features"));
  const CsvTable all = ReadCsv(dir_.File("again.csv"));
  ASSERT_EQ(all.rows.size(), 3000u);
  EXPECT_EQ(all.rows[1999], scored.rows[1999]);  // the stored score
}

TEST_F(PlumbctlCsvTest, FailureTheSchemaDecidesAtRow2201SendsNothing) {
  const std::string csv = dir_.File("parcels.csv");
  ASSERT_TRUE(WriteTextFile(csv, Parcels(2201, "far")).ok());
  const std::string out = dir_.File("scored.csv");
  const ProcessResult run = Online(csv, out);
  EXPECT_EQ(run.exit_code, 1);
  EXPECT_THAT(run.err,
              HasSubstr(": row 2201 (line 2202), column 'distance_km': 'far' "
                        "is not a number"));
  EXPECT_FALSE(std::filesystem::exists(out));
  EXPECT_FALSE(std::filesystem::exists(out + ".refused.csv"));
  EXPECT_FALSE(IsRecorded("p-0001", 1 + 1 % 37, "urban"));
}

TEST_F(PlumbctlCsvTest, OfflineRefusalWritesTheSameResumableFiles) {
  // An unseen region level: the set refuses it (UNSEEN_REJECT), which the
  // summary plumbctl checks against does not say.
  std::string text = Parcels();
  const size_t at = text.find("\np-2201,");
  const size_t region = text.find(",urban,", at);
  ASSERT_LT(region, text.find("\n", at + 1));
  text.replace(region, 7, ",lunar,");
  const std::string csv = dir_.File("parcels.csv");
  ASSERT_TRUE(WriteTextFile(csv, text).ok());
  const ProcessResult run = Offline(csv, dir_.File("off.csv"));
  EXPECT_EQ(run.exit_code, 1);
  EXPECT_THAT(run.err, HasSubstr("rows 2001..3000"));
  EXPECT_EQ(ReadCsv(dir_.File("off.csv")).rows.size(), 2000u);
  const CsvTable refused = ReadCsv(dir_.File("off.csv.refused.csv"));
  ASSERT_EQ(refused.rows.size(), 1000u);
  EXPECT_THAT(refused.rows[200][2], HasSubstr("INVALID_ARGUMENT: "));
  EXPECT_THAT(refused.rows[200][2], HasSubstr("lunar"));
}

TEST_F(PlumbctlCsvTest, RepeatedIdInTheFileNamesBothRows) {
  const std::string csv = dir_.File("twice.csv");
  ASSERT_TRUE(
      WriteTextFile(csv, "record_id,distance_km\np-1,1\np-7,2\np-7,3\n").ok());
  const ProcessResult run = Online(csv, dir_.File("out.csv"));
  EXPECT_EQ(run.exit_code, 1);
  EXPECT_THAT(run.err, HasSubstr("record_id 'p-7' appears in row 2 and row 3"));
  EXPECT_FALSE(std::filesystem::exists(dir_.File("out.csv")));
  EXPECT_FALSE(IsRecorded("p-1", 1));
}

TEST_F(PlumbctlCsvTest, HeaderChecks) {
  // ';'-delimited: one column, no feature. Refused, not scored at the
  // intercept.
  const std::string semi = dir_.File("semi.csv");
  ASSERT_TRUE(WriteTextFile(semi, "distance_km;region\n9;rural\n").ok());
  for (const bool online : {true, false}) {
    const ProcessResult r = online ? Online(semi, dir_.File("o.csv"))
                                   : Offline(semi, dir_.File("o.csv"));
    EXPECT_EQ(r.exit_code, 1);
    EXPECT_THAT(r.err, HasSubstr("no column is a feature of set 'courier'"));
    EXPECT_THAT(r.err, HasSubstr("plumbctl reads comma-separated files"));
  }
  EXPECT_FALSE(std::filesystem::exists(dir_.File("o.csv")));

  const std::string partial = dir_.File("partial.csv");
  ASSERT_TRUE(WriteTextFile(partial, "distance_km,region\n9,rural\n").ok());
  const ProcessResult noted = Online(partial, dir_.File("p.csv"));
  ASSERT_EQ(noted.exit_code, 0) << noted.err;
  EXPECT_THAT(noted.err, HasSubstr("note: no column for feature(s) "
                                   "parcel_kg, service, hour"));
  const ProcessResult strict =
      Online(partial, dir_.File("s.csv"), {"--strict"});
  EXPECT_EQ(strict.exit_code, 1);
  EXPECT_THAT(strict.err,
              HasSubstr("no column for feature(s) 'parcel_kg', 'service', "
                        "'hour' of set 'courier' (--strict"));
  EXPECT_FALSE(std::filesystem::exists(dir_.File("s.csv")));
}

TEST_F(PlumbctlCsvTest, NaTokensScoreLikeBlankCells) {
  const std::string blank = dir_.File("blank.csv");
  const std::string tokens = dir_.File("tokens.csv");
  ASSERT_TRUE(WriteTextFile(blank,
                            "record_id,distance_km,parcel_kg,region,hour\n"
                            "b-1,9,,,\nb-2,4,2,urban,10\n")
                  .ok());
  ASSERT_TRUE(WriteTextFile(tokens,
                            "record_id,distance_km,parcel_kg,region,hour\n"
                            "b-1,9,NA,n/a,NA\nb-2,4,2,urban,10\n")
                  .ok());
  ASSERT_EQ(Offline(blank, dir_.File("blank_out.csv")).exit_code, 0);
  const ProcessResult r =
      Offline(tokens, dir_.File("tokens_out.csv"), {"--na", "NA,n/a"});
  ASSERT_EQ(r.exit_code, 0) << r.err;
  const CsvTable a = ReadCsv(dir_.File("blank_out.csv"));
  const CsvTable b = ReadCsv(dir_.File("tokens_out.csv"));
  ASSERT_EQ(a.rows.size(), 2u);
  ASSERT_EQ(b.rows.size(), 2u);
  for (size_t row = 0; row < 2; ++row) {
    EXPECT_EQ(a.rows[row][5], b.rows[row][5]);  // log_odds, same text
    EXPECT_EQ(a.rows[row][6], b.rows[row][6]);  // probability
  }
  // Without --na, "NA" in a numeric column is an error that suggests it.
  const ProcessResult plain = Offline(tokens, dir_.File("plain.csv"));
  EXPECT_EQ(plain.exit_code, 1);
  EXPECT_THAT(plain.err, HasSubstr("'NA' is not a number"));
  EXPECT_THAT(plain.err, HasSubstr("pass --na"));
}

TEST_F(PlumbctlCsvTest, ScoreJsonAndSetsAndErrors) {
  const ProcessResult score = Plumbctl(
      {"score", "--addr", plumbd_->addr(), "--set", "courier", "--json",
       R"({"distance_km": 9, "region": "rural", "hour": 18})", "--record_id",
       "j-1", "--reasons", "2"});
  ASSERT_EQ(score.exit_code, 0) << score.err;
  EXPECT_THAT(score.out, HasSubstr("record_id    j-1"));
  // Without --record_id: "cli-<unix microseconds>-<8 hex>-1", never reused.
  const ProcessResult generated =
      Plumbctl({"score", "--addr", plumbd_->addr(), "--set", "courier",
                "--json", R"({"distance_km": 9})", "--format", "json"});
  ASSERT_EQ(generated.exit_code, 0) << generated.err;
  EXPECT_THAT(
      generated.out,
      MatchesRegex("(.|\n)*\"record_id\": \"cli-[0-9]{16}-[0-9a-f]{8}-1\""
                   "(.|\n)*"));
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
