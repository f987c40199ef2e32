// File: tests/daemon/util/flags_test.cc
#include "daemon/util/flags.h"

#include "absl/flags/flag.h"
#include "gmock/gmock.h"
#include "gtest/gtest.h"

ABSL_FLAG(std::string, test_set_file, "", "test flag");
ABSL_FLAG(int, test_batch, 1, "test flag");
ABSL_FLAG(bool, test_verbose, false, "test flag");

namespace plumbline::daemon {
namespace {

using ::testing::ElementsAre;
using ::testing::HasSubstr;

absl::StatusOr<std::vector<std::string>> Parse(std::vector<const char*> args) {
  args.insert(args.begin(), "prog");
  return ParseFlags(static_cast<int>(args.size()), args.data());
}

TEST(ParseFlagsTest, DashesAndUnderscoresAndBothValueForms) {
  absl::StatusOr<std::vector<std::string>> args =
      Parse({"score", "--test-set-file", "s.json", "--test_batch=5",
             "--test-verbose", "extra"});
  ASSERT_TRUE(args.ok()) << args.status();
  EXPECT_THAT(*args, ElementsAre("score", "extra"));
  EXPECT_EQ(absl::GetFlag(FLAGS_test_set_file), "s.json");
  EXPECT_EQ(absl::GetFlag(FLAGS_test_batch), 5);
  EXPECT_TRUE(absl::GetFlag(FLAGS_test_verbose));
  ASSERT_TRUE(Parse({"--notest_verbose", "--", "--not-a-flag"}).ok());
  EXPECT_FALSE(absl::GetFlag(FLAGS_test_verbose));
}

TEST(ParseFlagsTest, BadCommandLinesAreErrors) {
  absl::StatusOr<std::vector<std::string>> args = Parse({"--no_such_flag=1"});
  ASSERT_FALSE(args.ok());
  EXPECT_THAT(args.status().message(),
              HasSubstr("unknown flag --no_such_flag"));

  args = Parse({"--test_batch=many"});
  ASSERT_FALSE(args.ok());
  EXPECT_THAT(args.status().message(), HasSubstr("--test_batch='many'"));

  args = Parse({"--test_set_file"});
  ASSERT_FALSE(args.ok());
  EXPECT_THAT(args.status().message(), HasSubstr("needs a value"));
}

}  // namespace
}  // namespace plumbline::daemon
