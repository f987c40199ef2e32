// File: tests/daemon/util/event_log_test.cc
//
// The event log's options: the level filter, JSON lines (checked by parsing
// them back with protobuf's JSON parser), withheld record values and masked
// secrets, in both formats; and plumbd following its config's log section.
#include "daemon/util/event_log.h"

#include <filesystem>
#include <memory>
#include <string>

#include "absl/strings/str_cat.h"
#include "absl/strings/str_split.h"
#include "daemon/security/token_hash.h"
#include "gmock/gmock.h"
#include "google/protobuf/struct.pb.h"
#include "google/protobuf/util/json_util.h"
#include "gtest/gtest.h"
#include "tests/testing/process.h"
#include "tests/testing/test_sets.h"

namespace plumbline::daemon {
namespace {

using ::testing::HasSubstr;
using ::testing::Not;

google::protobuf::Struct ParseJsonLine(const std::string& line) {
  google::protobuf::Struct out;
  const auto status = google::protobuf::util::JsonStringToMessage(line, &out);
  EXPECT_TRUE(status.ok()) << status.message().as_string() << ": " << line;
  return out;
}

std::string Field(const google::protobuf::Struct& s, const std::string& key) {
  auto it = s.fields().find(key);
  return it == s.fields().end() ? "<absent>" : it->second.string_value();
}

// Restores the process-wide options after each test.
class EventLogTest : public ::testing::Test {
 protected:
  void SetUp() override { saved_ = CurrentLogOptions(); }
  void TearDown() override { ConfigureEventLog(saved_); }

  // Everything LogEvent wrote to stderr while `log` ran.
  template <typename F>
  static std::string Captured(F log) {
    ::testing::internal::CaptureStderr();
    log();
    return ::testing::internal::GetCapturedStderr();
  }

  LogOptions saved_;
};

TEST_F(EventLogTest, KeyValueIsTheDefault) {
  EXPECT_EQ(FormatEvent(LogOptions(), LogLevel::kWarning, "set_kept",
                        {{"set", "courier"}, {"file", "a b.json"}}),
            "level=warning event=set_kept set=courier file=\"a b.json\"");
}

TEST_F(EventLogTest, EventsBelowTheLevelAreDropped) {
  LogOptions options;
  options.min_level = LogLevel::kWarning;
  ConfigureEventLog(options);
  const std::string out = Captured([] {
    LogEvent(LogLevel::kInfo, "quiet_event");
    LogEvent(LogLevel::kWarning, "loud_event");
    LogEvent(LogLevel::kError, "louder_event");
  });
  EXPECT_THAT(out, Not(HasSubstr("quiet_event")));
  EXPECT_THAT(out, HasSubstr("level=warning event=loud_event\n"));
  EXPECT_THAT(out, HasSubstr("level=error event=louder_event\n"));

  options.min_level = LogLevel::kError;
  ConfigureEventLog(options);
  EXPECT_EQ(Captured([] { LogEvent(LogLevel::kWarning, "loud_event"); }), "");
}

TEST_F(EventLogTest, JsonLinesParseBackToTheSameFields) {
  LogOptions options;
  options.format = LogFormat::kJsonLines;
  ConfigureEventLog(options);
  const std::string awkward = "quote \" backslash \\ tab \t newline \n \x01 é";
  const std::string out = Captured([&] {
    LogEvent(LogLevel::kError, "set_rejected",
             {{"file", "sets/c.json"}, {"error", awkward}});
  });
  ASSERT_FALSE(out.empty());
  ASSERT_EQ(out.back(), '\n');
  ASSERT_EQ(out.find('\n'), out.size() - 1) << "one line per event: " << out;
  const google::protobuf::Struct line = ParseJsonLine(out);
  EXPECT_EQ(Field(line, "level"), "error");
  EXPECT_EQ(Field(line, "event"), "set_rejected");
  EXPECT_EQ(Field(line, "file"), "sets/c.json");
  EXPECT_EQ(Field(line, "error"), awkward);
  // Keys keep their order: level and event first.
  EXPECT_EQ(out.rfind("{\"level\":\"error\",\"event\":\"set_rejected\",", 0),
            0u);
}

TEST_F(EventLogTest, InvalidUtf8BecomesReplacementCharacters) {
  LogOptions options;
  options.format = LogFormat::kJsonLines;
  const std::string line =
      FormatEvent(options, LogLevel::kInfo, "e", {{"file", "bad\xff\xc3(end"}});
  EXPECT_EQ(Field(ParseJsonLine(line), "file"),
            "bad\xEF\xBF\xBD\xEF\xBF\xBD(end");
}

TEST_F(EventLogTest, RecordValuesAreWithheldUnlessAllowed) {
  const std::string features = "{\"distance_km\": 12.5, \"region\": \"rural\"}";
  for (LogFormat format : {LogFormat::kKeyValue, LogFormat::kJsonLines}) {
    LogOptions options;
    options.format = format;
    const std::string withheld = FormatEvent(
        options, LogLevel::kInfo, "record_refused",
        {{"set", "courier"}, RecordValueField("features", features)});
    EXPECT_THAT(withheld, HasSubstr("[withheld]"));
    EXPECT_THAT(withheld, Not(HasSubstr("12.5")));
    EXPECT_THAT(withheld, Not(HasSubstr("rural")));
    EXPECT_THAT(withheld, HasSubstr("courier"));

    options.record_values = true;
    const std::string shown =
        FormatEvent(options, LogLevel::kInfo, "record_refused",
                    {RecordValueField("features", features)});
    EXPECT_THAT(shown, HasSubstr("12.5"));
    EXPECT_THAT(shown, Not(HasSubstr("[withheld]")));
  }
}

TEST_F(EventLogTest, TokensAreMaskedWhateverTheOptions) {
  absl::StatusOr<NewToken> token = MakeToken();
  ASSERT_TRUE(token.ok());
  const std::string secret = token->token.substr(17);
  for (LogFormat format : {LogFormat::kKeyValue, LogFormat::kJsonLines}) {
    LogOptions options;
    options.format = format;
    options.record_values = true;
    const std::string line = FormatEvent(
        options, LogLevel::kWarning, "oops",
        {{"error", absl::StrCat("bad header 'Bearer ", token->token, "'")},
         RecordValueField("raw", token->token)});
    EXPECT_THAT(line, Not(HasSubstr(secret))) << line;
    EXPECT_THAT(line, HasSubstr("[masked]"));
  }
  const std::string out = Captured([&] {
    LogEvent(LogLevel::kError, "oops", {{"value", token->token}});
  });
  EXPECT_THAT(out, Not(HasSubstr(secret)));
  EXPECT_THAT(out, HasSubstr(absl::StrCat("plb_", token->id, "_[masked]")));
}

TEST(EventLogConfigTest, PlumbdWritesJsonLinesAtTheConfiguredLevel) {
  testing::TempDir dir;
  std::filesystem::create_directory(dir.File("sets"));
  ASSERT_TRUE(testing::WriteTextFile(dir.File("sets/courier.json"),
                                     testing::CourierSetJson("courier", "v1"))
                  .ok());
  ASSERT_TRUE(testing::WriteTextFile(
                  dir.File("plumbd.json"),
                  R"({"log": {"format": "JSON_LINES", "level": "WARNING"}})")
                  .ok());
  auto plumbd = testing::PlumbdProcess::Start(
      dir.path(), {"--config", dir.File("plumbd.json"), "--sets",
                   dir.File("sets"), "--ledger", dir.File("ledger.db")});
  ASSERT_TRUE(plumbd.ok()) << plumbd.status();
  const std::string log = (*plumbd)->Log();
  int lines = 0;
  for (absl::string_view line : absl::StrSplit(log, '\n', absl::SkipEmpty())) {
    ++lines;
    const google::protobuf::Struct parsed = ParseJsonLine(std::string(line));
    EXPECT_NE(Field(parsed, "level"), "info") << line;
  }
  // No access control configured: the one warning at startup.
  EXPECT_GE(lines, 1);
  EXPECT_THAT(log, HasSubstr(R"("event":"access_control_off")"));
  EXPECT_THAT(log, Not(HasSubstr("set_loaded")));
}

}  // namespace
}  // namespace plumbline::daemon
