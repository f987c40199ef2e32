// File: tests/daemon/cli/command_line_test.cc
//
// plumbctl's command line in process (RunPlumbctl, no daemon): each
// command's own flags, the errors of a misplaced, unknown or missing flag
// (exit 2, the flag named, the command's short usage), help both ways,
// --version, the '-'/'_' spellings, global flags before or after the
// command, and offline scoring's text and JSON output.
#include "daemon/cli/command_line.h"

#include <set>
#include <sstream>
#include <string>
#include <vector>

#include "absl/strings/str_cat.h"
#include "absl/strings/str_join.h"
#include "absl/strings/str_split.h"
#include "gmock/gmock.h"
#include "google/protobuf/util/json_util.h"
#include "gtest/gtest.h"
#include "plumbline/v1/scoring.pb.h"
#include "tests/testing/process.h"
#include "tests/testing/test_sets.h"

namespace plumbline::daemon {
namespace {

using ::testing::AllOf;
using ::testing::HasSubstr;
using ::testing::IsEmpty;
using ::testing::Not;
using ::testing::StartsWith;

struct CliResult {
  int code = -1;
  std::string out;
  std::string err;
};

CliResult Plumbctl(const std::vector<std::string>& args) {
  std::ostringstream out, err;
  CliResult run;
  run.code = RunPlumbctl(args, out, err);
  run.out = out.str();
  run.err = err.str();
  return run;
}

int Lines(const std::string& text) {
  return static_cast<int>(std::count(text.begin(), text.end(), '\n'));
}

TEST(CommandLineTest, VersionIsTheProjectVersion) {
  const CliResult run = Plumbctl({"--version"});
  EXPECT_EQ(run.code, 0);
  // PLUMBLINE_PROJECT_VERSION: project(plumbline VERSION ...) in the top
  // CMakeLists.txt, passed by tests/daemon/cli/CMakeLists.txt.
  EXPECT_EQ(run.out,
            absl::StrCat("plumbctl ", PLUMBLINE_PROJECT_VERSION, "\n"));
  EXPECT_THAT(run.err, IsEmpty());
}

TEST(CommandLineTest, AFlagOfAnotherCommandIsAnErrorWithTheShortUsage) {
  // The issue's example: health has no --version; fit and the registry
  // commands that act on one version do.
  const CliResult run =
      Plumbctl({"health", "--set", "courier", "--version", "v2"});
  EXPECT_EQ(run.code, 2);
  EXPECT_THAT(run.out, IsEmpty());
  EXPECT_EQ(run.err,
            "plumbctl: health: unknown flag --version (a flag of fit, "
            "approve, activate, shadow, show)\n"
            "usage: plumbctl health --set NAME [--format text|json]\n"
            "run 'plumbctl help health' for its flags\n");
}

TEST(CommandLineTest, UnknownFlagsAndArgumentsAreNamed) {
  CliResult run = Plumbctl({"sets", "--no_such_flag"});
  EXPECT_EQ(run.code, 2);
  EXPECT_THAT(run.err, StartsWith("plumbctl: sets: unknown flag "
                                  "--no_such_flag\nusage: plumbctl sets "
                                  "[--verbose] [--format text|json]\n"));
  EXPECT_LE(Lines(run.err), 4) << "a few lines, not the manual";

  run = Plumbctl({"sets", "--no-such-flag=1"});
  EXPECT_EQ(run.code, 2);
  EXPECT_THAT(run.err, HasSubstr("unknown flag --no-such-flag\n"));

  run = Plumbctl({"sets", "extra"});
  EXPECT_EQ(run.code, 2);
  EXPECT_THAT(run.err, HasSubstr("plumbctl: sets: unexpected argument "
                                 "'extra'"));

  run = Plumbctl({"frobnicate"});
  EXPECT_EQ(run.code, 2);
  EXPECT_THAT(run.err, StartsWith("plumbctl: unknown command 'frobnicate'\n"
                                  "usage: plumbctl [global flags] COMMAND"));
  EXPECT_LE(Lines(run.err), 6);

  run = Plumbctl({});
  EXPECT_EQ(run.code, 2);
  EXPECT_THAT(run.err, StartsWith("plumbctl: no command given\n"));
}

TEST(CommandLineTest, ACommandsFlagBeforeItsNameSaysWhereItGoes) {
  const CliResult run = Plumbctl(
      {"--actor", "alice", "approve", "--set", "courier", "--version", "v2"});
  EXPECT_EQ(run.code, 2);
  EXPECT_THAT(run.err,
              StartsWith("plumbctl: --actor is a flag of approve: write it "
                         "after the command name (plumbctl approve --actor "
                         "...)\nusage: plumbctl approve"));
}

TEST(CommandLineTest, MissingFlagsAndValuesAreNamed) {
  CliResult run = Plumbctl({"approve"});
  EXPECT_EQ(run.code, 2);
  EXPECT_THAT(run.err, StartsWith("plumbctl: approve needs --set NAME, "
                                  "--version VERSION\n"));

  run = Plumbctl({"fit", "--csv", "x.csv"});
  EXPECT_EQ(run.code, 2);
  EXPECT_THAT(run.err, HasSubstr("fit needs --target COLUMN, --out SET.json, "
                                 "--name NAME"));

  run = Plumbctl({"health", "--set"});
  EXPECT_EQ(run.code, 2);
  EXPECT_THAT(run.err, StartsWith("plumbctl: health: --set needs a value\n"));

  run = Plumbctl({"token"});
  EXPECT_EQ(run.code, 2);
  EXPECT_THAT(run.err, StartsWith("plumbctl: token needs a subcommand: "
                                  "token new\n"));

  run = Plumbctl({"score", "--json", "{}"});
  EXPECT_EQ(run.code, 2);
  EXPECT_THAT(run.err, StartsWith("plumbctl: score needs exactly one of "
                                  "--set and --set_file\nusage: plumbctl "
                                  "score"));
}

TEST(CommandLineTest, BadValuesAreNamed) {
  CliResult run = Plumbctl({"outcomes", "--csv", "x.csv", "--batch", "many"});
  EXPECT_EQ(run.code, 2);
  EXPECT_THAT(run.err, StartsWith("plumbctl: --batch: 'many' is not a whole "
                                  "number\nusage: plumbctl outcomes"));
  run = Plumbctl({"sets", "--format", "yaml"});
  EXPECT_EQ(run.code, 2);
  EXPECT_THAT(run.err, HasSubstr("--format: 'yaml'; expected text or json"));
  run = Plumbctl({"fit", "--csv", "x", "--target", "y", "--out", "o", "--name",
                  "n", "--l2", "-1"});
  EXPECT_EQ(run.code, 2);
  EXPECT_THAT(run.err, HasSubstr("--l2: '-1' is not a finite number >= 0"));
  run = Plumbctl({"sets", "--verbose=maybe"});
  EXPECT_EQ(run.code, 2);
  EXPECT_THAT(run.err, StartsWith("plumbctl: sets: --verbose: 'maybe' is not "
                                  "true or false\n"));
  EXPECT_EQ(Plumbctl({"sets", "--verbose=false", "--timeout_ms", "0"}).err,
            Plumbctl({"sets", "--timeout_ms", "0"}).err);
}

TEST(CommandLineTest, GlobalFlagsGoBeforeOrAfterTheCommand) {
  // --timeout_ms is checked before anything is sent: both places reach it.
  for (const std::vector<std::string>& args :
       {std::vector<std::string>{"--timeout_ms", "0", "sets"},
        std::vector<std::string>{"sets", "--timeout_ms", "0"},
        std::vector<std::string>{"sets", "--timeout-ms=0"},
        std::vector<std::string>{"--addr", "x:1", "sets", "--timeout_ms",
                                 "0"}}) {
    const CliResult run = Plumbctl(args);
    EXPECT_EQ(run.code, 2) << absl::StrJoin(args, " ");
    EXPECT_THAT(run.err, StartsWith("plumbctl: --timeout_ms must be >= 1\n"))
        << absl::StrJoin(args, " ");
  }
}

TEST(CommandLineTest, HelpBothWaysForEveryCommand) {
  PlumbctlParser parser;
  const CliResult main_help = Plumbctl({"help"});
  EXPECT_EQ(main_help.code, 0);
  EXPECT_EQ(Plumbctl({"--help"}).out, main_help.out);
  for (const PlumbctlParser::Command& command : parser.commands()) {
    const std::string name = CommandName(*command.spec);
    // The command list names it with its summary.
    EXPECT_THAT(main_help.out, HasSubstr(absl::StrCat("  ", name, " ")))
        << name;
    std::vector<std::string> help_args = {"help"};
    std::vector<std::string> flag_args;
    for (const std::string& word : command.spec->path) {
      help_args.push_back(word);
      flag_args.push_back(word);
    }
    flag_args.push_back("--help");
    const CliResult help = Plumbctl(help_args);
    const CliResult flag = Plumbctl(flag_args);
    EXPECT_EQ(help.code, 0) << name << help.err;
    EXPECT_EQ(flag.code, 0) << name << flag.err;
    EXPECT_EQ(help.out, flag.out) << name;
    EXPECT_THAT(help.out, StartsWith(absl::StrCat("usage: plumbctl ", name)));
    // Every flag the parser accepts for it is documented.
    for (const CLI::Option* option : UserFlags(*command.app, false)) {
      EXPECT_THAT(help.out,
                  HasSubstr(absl::StrCat("\n  ", FlagSynopsis(*option), "\n")))
          << name;
    }
  }
  EXPECT_EQ(Plumbctl({"help", "token"}).out,
            Plumbctl({"help", "token", "new"}).out);
  const CliResult unknown = Plumbctl({"help", "nope"});
  EXPECT_EQ(unknown.code, 2);
  EXPECT_THAT(unknown.err, HasSubstr("help: unknown command 'nope'"));
  // The manual: every command's help after plumbctl's.
  const CliResult all = Plumbctl({"help", "--all"});
  EXPECT_EQ(all.code, 0);
  // Each command: its name as a heading over its usage (indented), then
  // its description and flags as `help COMMAND` prints them.
  const std::string fit_help =
      CommandHelp({parser.Find({"fit"})->spec, parser.Find({"fit"})->app},
                  /*global_note=*/false);
  EXPECT_THAT(
      all.out,
      AllOf(StartsWith(main_help.out),
            HasSubstr("\nplumbctl fit:\n  usage: plumbctl fit --csv FILE"),
            HasSubstr(fit_help.substr(fit_help.find("\n\n")))));
}

// Offline scoring needs no daemon: the courier test set from a file.
class OfflineScoreTest : public ::testing::Test {
 protected:
  void SetUp() override {
    set_file_ = dir_.File("courier.json");
    ASSERT_TRUE(testing::WriteTextFile(set_file_,
                                       testing::CourierSetJson("courier", "v1"))
                    .ok());
  }
  testing::TempDir dir_;
  std::string set_file_;
};

// distance 9, parcel 2 kg, rural, standard service, hour 18. From the
// coefficients in tests/testing/test_sets.h: log-odds = -1.5 + 0.8 (9 - 5) /
// 2.5 + 0.3 (2 - 2) / 1 + 0.9 + 0 + 0.5 = 1.18; probability = 1 / (1 +
// e^-1.18) = 0.7649478037637648 (Python's math.exp).
constexpr char kRecord[] =
    R"({"distance_km": 9, "parcel_kg": 2, "region": "rural",
        "service": "standard", "hour": 18})";

TEST_F(OfflineScoreTest, TextHasSixSignificantDigitsJsonAll) {
  const CliResult text = Plumbctl({"score", "--set_file", set_file_, "--json",
                                   kRecord, "--record_id", "r-1"});
  ASSERT_EQ(text.code, 0) << text.err;
  EXPECT_THAT(text.out, HasSubstr("log_odds     1.18\n"));
  EXPECT_THAT(text.out, HasSubstr("probability  0.764948\n"));

  const CliResult json =
      Plumbctl({"score", "--set-file", set_file_, "--json", kRecord,
                "--record-id", "r-1", "--format", "json"});
  ASSERT_EQ(json.code, 0) << json.err;
  v1::ScoreReply reply;
  ASSERT_TRUE(
      google::protobuf::util::JsonStringToMessage(json.out, &reply).ok())
      << json.out;
  EXPECT_EQ(reply.set(), "courier");
  EXPECT_EQ(reply.score().record_id(), "r-1");
  EXPECT_NEAR(reply.score().log_odds(), 1.18, 1e-14);
  EXPECT_NEAR(reply.score().probability(), 0.7649478037637648, 1e-15);

  const CliResult csv_json = Plumbctl({"score", "--set_file", set_file_,
                                       "--csv", "in.csv", "--format", "json"});
  EXPECT_EQ(csv_json.code, 2);
  EXPECT_THAT(csv_json.err, HasSubstr("--format json goes with --json"));
}

TEST_F(OfflineScoreTest, BothSpellingsAndTheLastOfARepeatedFlag) {
  const CliResult underscore =
      Plumbctl({"score", "--set_file", set_file_, "--json", kRecord,
                "--record_id", "a"});
  const CliResult dash =
      Plumbctl({"score", "--set-file", "missing.json", "--set-file", set_file_,
                "--json", kRecord, "--record-id=a"});
  ASSERT_EQ(underscore.code, 0) << underscore.err;
  ASSERT_EQ(dash.code, 0) << dash.err;
  EXPECT_EQ(underscore.out, dash.out);
}

TEST_F(OfflineScoreTest, CountsAgreeInNumber) {
  const std::string csv = dir_.File("one.csv");
  ASSERT_TRUE(testing::WriteTextFile(csv,
                                     "record_id,distance_km,region,hour\n"
                                     "p-1,9,rural,18\n")
                  .ok());
  CliResult run = Plumbctl({"score", "--set_file", set_file_, "--csv", csv,
                            "--out", dir_.File("one_out.csv")});
  ASSERT_EQ(run.code, 0) << run.err;
  EXPECT_THAT(run.err, HasSubstr("scored 1 record in 1 batch\n"));

  const std::string three = dir_.File("three.csv");
  ASSERT_TRUE(testing::WriteTextFile(three,
                                     "record_id,distance_km,region,hour\n"
                                     "p-1,9,rural,18\np-2,3,urban,8\n"
                                     "p-3,4,suburban,12\n")
                  .ok());
  run = Plumbctl({"score", "--set_file", set_file_, "--csv", three, "--out",
                  dir_.File("three_out.csv"), "--batch", "2"});
  ASSERT_EQ(run.code, 0) << run.err;
  EXPECT_THAT(run.err, HasSubstr("scored 3 records in 2 batches\n"));
}

TEST(CommandLineTest, CompletionOffersEveryCommand) {
  const CliResult run = Plumbctl({"completion", "bash"});
  ASSERT_EQ(run.code, 0) << run.err;
  EXPECT_THAT(run.out, HasSubstr("complete -F _plumbctl plumbctl\n"));
  PlumbctlParser parser;
  for (const PlumbctlParser::Command& command : parser.commands()) {
    EXPECT_THAT(run.out, HasSubstr(absl::StrCat(
                             "\"", CommandName(*command.spec), "\") ")));
  }
  const CliResult zsh = Plumbctl({"completion", "zsh"});
  EXPECT_EQ(zsh.code, 2);
  EXPECT_THAT(zsh.err, HasSubstr("completion: 'zsh': only bash is supported"));
}

}  // namespace
}  // namespace plumbline::daemon
