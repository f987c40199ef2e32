// File: tests/daemon/csv/records_test.cc
//
// What plumbctl checks locally before it sends a CSV row: missing-value
// tokens, repeated record ids, REJECT features without a value, the header
// checks; the refusals table of an interrupted run; ListFirst.
#include "daemon/csv/records.h"

#include <string>
#include <vector>

#include "absl/strings/str_cat.h"
#include "daemon/csv/missing.h"
#include "daemon/csv/table.h"
#include "gmock/gmock.h"
#include "gtest/gtest.h"

namespace plumbline::daemon {
namespace {

using ::testing::ElementsAre;
using ::testing::HasSubstr;

// distance_km NUMERIC (REJECT), region CATEGORICAL (IMPUTE), hour BINNED.
v1::SetSummary Schema() {
  v1::SetSummary schema;
  schema.set_name("courier");
  v1::FeatureSummary* distance = schema.add_features();
  distance->set_name("distance_km");
  distance->set_kind(v1::FeatureSummary::NUMERIC);
  distance->set_missing("REJECT");
  v1::FeatureSummary* region = schema.add_features();
  region->set_name("region");
  region->set_kind(v1::FeatureSummary::CATEGORICAL);
  region->set_missing("IMPUTE");
  v1::FeatureSummary* hour = schema.add_features();
  hour->set_name("hour");
  hour->set_kind(v1::FeatureSummary::BINNED);
  hour->set_missing("IMPUTE");
  return schema;
}

CsvTable Table(const std::string& text) {
  absl::StatusOr<CsvTable> table = ParseCsv(text, "in.csv");
  EXPECT_TRUE(table.ok()) << table.status();
  return table.ok() ? *table : CsvTable();
}

CsvRecordOptions Options(const std::string& na = "") {
  CsvRecordOptions options;
  absl::StatusOr<MissingCells> missing = MissingCells::Parse(na);
  EXPECT_TRUE(missing.ok()) << missing.status();
  if (missing.ok()) options.missing = *missing;
  options.new_id = [n = 0]() mutable { return absl::StrCat("gen-", ++n); };
  return options;
}

TEST(MissingCellsTest, BlankCellsAndTokens) {
  const MissingCells blank;
  EXPECT_TRUE(blank.IsMissing(""));
  EXPECT_TRUE(blank.IsMissing(" \t"));
  EXPECT_FALSE(blank.IsMissing("NA"));
  absl::StatusOr<MissingCells> na = MissingCells::Parse(" NA, n/a ,NA");
  ASSERT_TRUE(na.ok()) << na.status();
  EXPECT_THAT(na->tokens(), ElementsAre("NA", "n/a"));
  EXPECT_TRUE(na->IsMissing("NA"));
  EXPECT_TRUE(na->IsMissing(" n/a "));
  EXPECT_TRUE(na->IsMissing(""));
  EXPECT_FALSE(na->IsMissing("na"));  // case-sensitive
  EXPECT_FALSE(na->IsMissing("NAN"));
  EXPECT_THAT(MissingCells::Parse("NA,,-").status().message(),
              HasSubstr("--na 'NA,,-': an empty token"));
}

TEST(ListFirstTest, FiveThenACount) {
  EXPECT_EQ(ListFirst({"a", "b"}), "'a', 'b'");
  EXPECT_EQ(ListFirst({"1", "2", "3", "4", "5", "6", "7"}, false),
            "1, 2, 3, 4, 5 \xE2\x80\xA6 and 2 more");
  EXPECT_EQ(ListFirst({}), "");
}

TEST(CsvToRecordsTest, NaTokensAreMissingInEveryKind) {
  const CsvTable table = Table(
      "distance_km,region,hour\n"
      "4,NA,n/a\n"
      "5,n/a,NA\n");
  const v1::SetSummary schema = Schema();  // the layout points into it
  const CsvLayout layout = LayoutCsv(table.header, schema);
  absl::StatusOr<std::vector<v1::Record>> records =
      CsvToRecords(table, layout, "in.csv", Options("NA,n/a"));
  ASSERT_TRUE(records.ok()) << records.status();
  for (const v1::Record& r : *records) {
    EXPECT_TRUE(r.features().fields().at("region").has_null_value());
    EXPECT_TRUE(r.features().fields().at("hour").has_null_value());
  }
  EXPECT_EQ((*records)[0].record_id(), "gen-1");
  EXPECT_EQ((*records)[1].record_id(), "gen-2");
  // Without --na the same file is refused at the numeric cell, with advice.
  absl::StatusOr<std::vector<v1::Record>> plain =
      CsvToRecords(table, layout, "in.csv", Options());
  EXPECT_THAT(plain.status().message(),
              HasSubstr("row 1 (line 2), column 'hour': 'n/a' is not a "
                        "number (feature 'hour' is BINNED); if it marks a "
                        "missing value, pass --na"));
}

TEST(CsvToRecordsTest, RepeatedIdNamesBothRows) {
  const CsvTable table = Table(
      "record_id,distance_km\n"
      "p-1,1\np-7,2\np-3,3\np-7,4\n");
  const v1::SetSummary schema = Schema();
  absl::StatusOr<std::vector<v1::Record>> records =
      CsvToRecords(table, LayoutCsv(table.header, schema), "in.csv", Options());
  ASSERT_FALSE(records.ok());
  EXPECT_EQ(records.status().code(), absl::StatusCode::kInvalidArgument);
  EXPECT_THAT(records.status().message(),
              HasSubstr("in.csv: record_id 'p-7' appears in row 2 and row 4"));
}

TEST(CsvToRecordsTest, MissingValueOfARejectFeatureAndNonFiniteNumbers) {
  const v1::SetSummary schema = Schema();
  const CsvTable table = Table("distance_km,region\n1,urban\nNA,rural\n");
  const CsvLayout layout = LayoutCsv(table.header, schema);
  EXPECT_THAT(
      CsvToRecords(table, layout, "in.csv", Options("NA")).status().message(),
      HasSubstr("row 2 (line 3), column 'distance_km': a missing value, and "
                "feature 'distance_km' of the set refuses records without it "
                "(missing rule REJECT)"));
  const CsvTable inf = Table("distance_km\ninf\n");
  EXPECT_THAT(
      CsvToRecords(inf, LayoutCsv(inf.header, schema), "in.csv", Options())
          .status()
          .message(),
      HasSubstr("'inf' is not a finite number"));
}

TEST(CheckLayoutTest, HeaderChecks) {
  const v1::SetSummary schema = Schema();
  const std::vector<std::string> semicolons = {"distance_km;region;hour"};
  absl::Status none = CheckLayout(LayoutCsv(semicolons, schema), schema,
                                  semicolons, false, "in.csv");
  EXPECT_EQ(none.code(), absl::StatusCode::kInvalidArgument);
  EXPECT_THAT(none.message(),
              HasSubstr("in.csv: no column is a feature of set 'courier'"));
  EXPECT_THAT(none.message(), HasSubstr("plumbctl reads comma-separated"));

  const std::vector<std::string> no_distance = {"region", "note"};
  EXPECT_THAT(CheckLayout(LayoutCsv(no_distance, schema), schema, no_distance,
                          false, "in.csv")
                  .message(),
              HasSubstr("no column for feature(s) 'distance_km' of set "
                        "'courier', whose missing rule is REJECT"));

  const std::vector<std::string> no_hour = {"distance_km", "region"};
  EXPECT_TRUE(
      CheckLayout(LayoutCsv(no_hour, schema), schema, no_hour, false, "in.csv")
          .ok());
  EXPECT_THAT(
      CheckLayout(LayoutCsv(no_hour, schema), schema, no_hour, true, "in.csv")
          .message(),
      HasSubstr("no column for feature(s) 'hour' of set 'courier' "
                "(--strict"));
}

TEST(FormatRefusedCsvTest, RowIdErrorThenTheInputColumns) {
  const CsvTable table = Table(
      "row,distance_km,record_id\n"
      "x,1,a\ny,2,b\nz,3,c\n");
  const v1::SetSummary schema = Schema();
  const CsvLayout layout = LayoutCsv(table.header, schema);
  absl::StatusOr<std::vector<v1::Record>> records =
      CsvToRecords(table, layout, "in.csv", Options());
  ASSERT_TRUE(records.ok()) << records.status();
  EXPECT_EQ(FormatRefusedCsv(table, layout, *records, 1,
                             {"ALREADY_EXISTS: b, again", "not sent"}),
            "refused_row,record_id,error,row,distance_km\n"
            "2,b,\"ALREADY_EXISTS: b, again\",y,2\n"
            "3,c,not sent,z,3\n");
}

}  // namespace
}  // namespace plumbline::daemon
