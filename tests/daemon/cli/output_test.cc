// File: tests/daemon/cli/output_test.cc
//
// plumbctl's output formats: six significant digits for people, counts that
// agree in number, and --format json through protobuf's JSON mapping (every
// field present, full precision, proto field names).
#include "daemon/cli/output.h"

#include <cmath>
#include <limits>
#include <sstream>

#include "gmock/gmock.h"
#include "google/protobuf/util/json_util.h"
#include "gtest/gtest.h"
#include "plumbline/v1/monitor.pb.h"
#include "plumbline/v1/registry.pb.h"
#include "tests/testing/status_matchers.h"

namespace plumbline::daemon {
namespace {

using ::plumbline::testing::StatusIs;
using ::testing::HasSubstr;
using ::testing::Not;

TEST(OutputTest, NumbersHaveSixSignificantDigits) {
  // printf's %g with precision 6 (C standard, 7.21.6.1): 6 significant
  // digits, trailing zeros dropped, exponent form below 1e-4 or from 1e6.
  EXPECT_EQ(FormatNumber(0.123456789), "0.123457");
  EXPECT_EQ(FormatNumber(-2.5), "-2.5");
  EXPECT_EQ(FormatNumber(1234567.0), "1.23457e+06");
  EXPECT_EQ(FormatNumber(0.00001234567), "1.23457e-05");
  EXPECT_EQ(FormatNumber(0), "0");
  EXPECT_EQ(FormatNumber(std::numeric_limits<double>::infinity()), "inf");
  EXPECT_EQ(FormatNumber(std::nan("")), "nan");
}

TEST(OutputTest, CountsAgreeInNumber) {
  EXPECT_EQ(CountOf(0, "record"), "0 records");
  EXPECT_EQ(CountOf(1, "record"), "1 record");
  EXPECT_EQ(CountOf(2, "record"), "2 records");
  EXPECT_EQ(CountOf(1, "batch", "batches"), "1 batch");
  EXPECT_EQ(CountOf(3, "batch", "batches"), "3 batches");
  EXPECT_EQ(CountOf(-1, "record"), "-1 records");
}

TEST(OutputTest, FormatNamesTheFlagWhenWrong) {
  ASSERT_OK_AND_ASSIGN(OutputFormat text, ParseOutputFormat("text"));
  EXPECT_EQ(text, OutputFormat::kText);
  ASSERT_OK_AND_ASSIGN(OutputFormat json, ParseOutputFormat("json"));
  EXPECT_EQ(json, OutputFormat::kJson);
  EXPECT_THAT(ParseOutputFormat("yaml"),
              StatusIs(absl::StatusCode::kInvalidArgument,
                       HasSubstr("--format: 'yaml'; expected text or json")));
}

TEST(OutputTest, JsonHasEveryFieldAndFullPrecision) {
  v1::SetHealth health;
  health.set_set("courier");
  health.set_state(v1::WATCH);
  v1::WindowHealth* window = health.add_windows();
  window->set_window("count");
  window->mutable_log_loss()->set_defined(true);
  window->mutable_log_loss()->set_value(0.1 + 0.2);  // 0.30000000000000004
  ASSERT_OK_AND_ASSIGN(std::string json, MessageJson(health));
  // Proto field names; zero and empty values present (int64 as a string,
  // the mapping's rule); an unset message (no evaluation yet) absent; enums
  // by name; one document.
  EXPECT_THAT(json, HasSubstr("\"labelled\": \"0\"")) << json;
  EXPECT_THAT(json, HasSubstr("\"version\": \"\"")) << json;
  EXPECT_THAT(json, HasSubstr("\"reasons\": []")) << json;
  EXPECT_THAT(json, HasSubstr("\"state\": \"WATCH\"")) << json;
  EXPECT_THAT(json, HasSubstr("\"log_loss\"")) << json;
  EXPECT_THAT(json, Not(HasSubstr("logLoss")));
  EXPECT_THAT(json, Not(HasSubstr("evaluated_at")));
  EXPECT_EQ(json.back(), '\n');
  // Reads back to the same message, bit for bit.
  v1::SetHealth back;
  google::protobuf::util::JsonParseOptions strict;
  ASSERT_TRUE(
      google::protobuf::util::JsonStringToMessage(json, &back, strict).ok());
  EXPECT_EQ(back.windows(0).log_loss().value(), 0.1 + 0.2);
  EXPECT_EQ(back.SerializeAsString(), health.SerializeAsString());
}

TEST(OutputTest, PrintReplyPicksTextOrJson) {
  v1::AuditReply reply;
  reply.add_entries()->set_action("approved");
  std::ostringstream text, json;
  ASSERT_OK(PrintReply(
      reply, OutputFormat::kText, [] { return std::string("a table\n"); },
      text));
  EXPECT_EQ(text.str(), "a table\n");
  ASSERT_OK(PrintReply(
      reply, OutputFormat::kJson, [] { return std::string("unused"); }, json));
  EXPECT_THAT(json.str(), HasSubstr("\"entries\""));
  EXPECT_THAT(json.str(), HasSubstr("\"action\": \"approved\""));
}

}  // namespace
}  // namespace plumbline::daemon
