// File: tests/daemon/cli/completion_test.cc
//
// The bash completion script is made from the parser: every command, every
// flag of each (in both spellings where it has two), the fixed lists of
// values and file names where a value is a file. (bash runs it in
// plumbctl_binary_test.cc.)
#include "daemon/cli/completion.h"

#include "absl/strings/str_cat.h"
#include "daemon/cli/command_line.h"
#include "gmock/gmock.h"
#include "gtest/gtest.h"

namespace plumbline::daemon {
namespace {

using ::testing::HasSubstr;

TEST(CompletionTest, EveryFlagOfEveryCommandIsOffered) {
  PlumbctlParser parser;
  const std::string script = BashCompletion(parser.app(), parser.HelpEntries());
  for (const PlumbctlParser::Command& command : parser.commands()) {
    const std::string name = CommandName(*command.spec);
    // The arm of `case "$cmd"` that completes "-" lists the command's flags.
    const size_t arm = script.find(
        absl::StrCat("    \"", name, "\") _plumbctl_words \"--help"));
    ASSERT_NE(arm, std::string::npos) << name;
    const std::string line = script.substr(arm, script.find('\n', arm) - arm);
    for (const CLI::Option* flag : UserFlags(*command.app, true)) {
      EXPECT_THAT(line,
                  HasSubstr(absl::StrCat(" --", flag->get_lnames().front())))
          << name;
    }
  }
}

TEST(CompletionTest, ValuesAreListsFilesOrLeftToTheUser) {
  PlumbctlParser parser;
  const std::string script = BashCompletion(parser.app(), parser.HelpEntries());
  EXPECT_THAT(script, HasSubstr("\"score:--set_file\"|\"score:--set-file\") "
                                "_plumbctl_files; return ;;"));
  EXPECT_THAT(script, HasSubstr("\"health:--format\") _plumbctl_words "
                                "\"text json\"; return ;;"));
  EXPECT_THAT(script, HasSubstr("\"outcome:--label\") _plumbctl_words "
                                "\"0 1\"; return ;;"));
  EXPECT_THAT(script, HasSubstr("\"approve:--reason\") return ;;"));
  // Before the command: the global flags.
  EXPECT_THAT(script, HasSubstr("\":--tls_ca\"|\":--tls-ca\") "
                                "_plumbctl_files; return ;;"));
}

}  // namespace
}  // namespace plumbline::daemon
