// File: tests/daemon/csv/table_test.cc
// The CSV reader/writer and the CSV → record typing shared by plumbctl's
// online and offline scoring. Expected parses follow RFC 4180's rules.
#include "daemon/csv/table.h"

#include "absl/strings/str_cat.h"
#include "daemon/csv/records.h"
#include "gmock/gmock.h"
#include "gtest/gtest.h"

namespace plumbline::daemon {
namespace {

using ::testing::ElementsAre;
using ::testing::HasSubstr;

TEST(ParseCsvTest, QuotesCommasNewlinesAndCrlf) {
  absl::StatusOr<CsvTable> table = ParseCsv(
      "id,note,n\r\n"
      "1,\"says \"\"hi\"\", then, leaves\",2\r\n"
      "2,\"two\nlines\",\r\n"
      "\n"
      "3,,7",
      "t.csv");
  ASSERT_TRUE(table.ok()) << table.status();
  EXPECT_THAT(table->header, ElementsAre("id", "note", "n"));
  ASSERT_EQ(table->rows.size(), 3u);
  EXPECT_THAT(table->rows[0],
              ElementsAre("1", "says \"hi\", then, leaves", "2"));
  EXPECT_THAT(table->rows[1], ElementsAre("2", "two\nlines", ""));
  EXPECT_THAT(table->rows[2], ElementsAre("3", "", "7"));
  // Line numbers of record starts: the quoted newline moves row 3 down, the
  // blank line is skipped.
  EXPECT_THAT(table->row_lines, ElementsAre(2, 3, 6));
}

TEST(ParseCsvTest, ByteOrderMarkIsSkipped) {
  absl::StatusOr<CsvTable> table = ParseCsv("\xEF\xBB\xBFx,y\n1,2\n", "t.csv");
  ASSERT_TRUE(table.ok());
  EXPECT_THAT(table->header, ElementsAre("x", "y"));
}

TEST(ParseCsvTest, ErrorsNameFileAndLine) {
  struct Case {
    const char* text;
    const char* message_part;
  };
  const Case cases[] = {
      {"", "no header row"},
      {"a,b\n1,\"open\n", "t.csv: line 2: unterminated quoted field"},
      {"a,b\n1,x\"y\n", "t.csv: line 2: a '\"' inside an unquoted field"},
      {"a,b\n1,\"x\"y\n", "t.csv: line 2: text after the closing"},
      {"a,b\n1,2\n3\n",
       "t.csv: row 2 (line 3): 1 fields, but the header has 2"},
      {"a,a\n", "header names column 'a' twice"},
      {"a,,b\n", "header column 2 has no name"},
  };
  for (const Case& c : cases) {
    absl::StatusOr<CsvTable> table = ParseCsv(c.text, "t.csv");
    ASSERT_FALSE(table.ok()) << c.text;
    EXPECT_EQ(table.status().code(), absl::StatusCode::kInvalidArgument);
    EXPECT_THAT(table.status().message(), HasSubstr(c.message_part)) << c.text;
  }
}

TEST(FormatCsvRowTest, QuotesOnlyWhenNeededAndRoundTrips) {
  const std::vector<std::string> fields = {"plain", "a,b", "say \"x\"",
                                           "two\nlines", ""};
  const std::string line = FormatCsvRow(fields);
  EXPECT_EQ(line, "plain,\"a,b\",\"say \"\"x\"\"\",\"two\nlines\",\n");
  absl::StatusOr<CsvTable> back = ParseCsv("h1,h2,h3,h4,h5\n" + line, "t");
  ASSERT_TRUE(back.ok());
  EXPECT_EQ(back->rows[0], fields);
}

// Found by tests/fuzz/fuzz_csv: a file starting with two byte-order marks
// has a first column named "\xEF\xBB\xBFx"; written back unquoted, the next
// read took that mark for the file's own and dropped it.
TEST(FormatCsvRowTest, AFieldStartingWithAByteOrderMarkRoundTrips) {
  absl::StatusOr<CsvTable> table =
      ParseCsv("\xEF\xBB\xBF\xEF\xBB\xBFx,y\n1,2\n", "t.csv");
  ASSERT_TRUE(table.ok()) << table.status();
  ASSERT_EQ(table->header[0], "\xEF\xBB\xBFx");
  const std::string written =
      FormatCsvRow(table->header) + FormatCsvRow(table->rows[0]);
  EXPECT_EQ(written, "\"\xEF\xBB\xBFx\",y\n1,2\n");
  absl::StatusOr<CsvTable> back = ParseCsv(written, "t.csv");
  ASSERT_TRUE(back.ok()) << back.status();
  EXPECT_EQ(back->header, table->header);
}

v1::SetSummary Schema() {
  v1::SetSummary schema;
  schema.set_name("courier");
  v1::FeatureSummary* distance = schema.add_features();
  distance->set_name("distance_km");
  distance->set_kind(v1::FeatureSummary::NUMERIC);
  v1::FeatureSummary* region = schema.add_features();
  region->set_name("region");
  region->set_kind(v1::FeatureSummary::CATEGORICAL);
  v1::FeatureSummary* hour = schema.add_features();
  hour->set_name("hour");
  hour->set_kind(v1::FeatureSummary::BINNED);
  return schema;
}

// Ids "<prefix>-1", "<prefix>-2", ... in the order asked for.
CsvRecordOptions Ids(const std::string& prefix) {
  CsvRecordOptions options;
  options.new_id = [prefix, n = 0]() mutable {
    return absl::StrCat(prefix, "-", ++n);
  };
  return options;
}

TEST(CsvToRecordsTest, TypesCellsBySchema) {
  const v1::SetSummary schema = Schema();
  absl::StatusOr<CsvTable> table = ParseCsv(
      "note,region,distance_km,record_id\n"
      "a,rural, 4.5 ,r1\n"
      "b,,,\n",
      "in.csv");
  ASSERT_TRUE(table.ok());
  const CsvLayout layout = LayoutCsv(table->header, schema);
  EXPECT_EQ(layout.record_id_column, 3);
  EXPECT_THAT(layout.absent_features, ElementsAre("hour"));
  absl::StatusOr<std::vector<v1::Record>> records =
      CsvToRecords(*table, layout, "in.csv", Ids("in-100"));
  ASSERT_TRUE(records.ok()) << records.status();
  ASSERT_EQ(records->size(), 2u);
  const auto& first = (*records)[0];
  EXPECT_EQ(first.record_id(), "r1");
  EXPECT_EQ(first.features().fields().size(), 2u);  // "note" is not sent
  EXPECT_EQ(first.features().fields().at("distance_km").number_value(), 4.5);
  EXPECT_EQ(first.features().fields().at("region").string_value(), "rural");
  const auto& second = (*records)[1];
  EXPECT_EQ(second.record_id(), "in-100-1");  // empty id cell: generated
  EXPECT_TRUE(second.features().fields().at("distance_km").has_null_value());
  EXPECT_TRUE(second.features().fields().at("region").has_null_value());
}

TEST(CsvToRecordsTest, UnparseableNumberNamesRowAndColumn) {
  const v1::SetSummary schema = Schema();
  absl::StatusOr<CsvTable> table =
      ParseCsv("distance_km,hour\n1,2\n3,late\n", "in.csv");
  ASSERT_TRUE(table.ok());
  absl::StatusOr<std::vector<v1::Record>> records = CsvToRecords(
      *table, LayoutCsv(table->header, schema), "in.csv", Ids("in"));
  ASSERT_FALSE(records.ok());
  EXPECT_EQ(records.status().code(), absl::StatusCode::kInvalidArgument);
  EXPECT_THAT(records.status().message(),
              HasSubstr("in.csv: row 2 (line 3), column 'hour': 'late' is not "
                        "a number"));
}

TEST(FormatScoredCsvTest, AddsIdScoreAndReasonColumns) {
  const v1::SetSummary schema = Schema();
  absl::StatusOr<CsvTable> table = ParseCsv("distance_km\n9\n", "in.csv");
  ASSERT_TRUE(table.ok());
  const CsvLayout layout = LayoutCsv(table->header, schema);
  absl::StatusOr<std::vector<v1::Record>> records =
      CsvToRecords(*table, layout, "in.csv", Ids("in-7"));
  ASSERT_TRUE(records.ok());
  v1::Scored scored;
  scored.set_log_odds(0.5);
  scored.set_probability(0.1);
  v1::Reason* reason = scored.add_reasons();
  reason->set_feature("distance_km");
  reason->set_contribution(0.25);
  const std::string out =
      FormatScoredCsv(*table, layout, *records, {scored}, 2);
  EXPECT_EQ(out,
            "distance_km,record_id,log_odds,probability,reason_1,reason_2\n"
            "9,in-7-1,0.5,0.10000000000000001,distance_km:0.25,\n");
}

}  // namespace
}  // namespace plumbline::daemon
