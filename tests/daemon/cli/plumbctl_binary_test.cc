// File: tests/daemon/cli/plumbctl_binary_test.cc
//
// The real programs: `plumbd --version` and `plumbctl --version`, plumbctl's
// exit status 2 and message for a misplaced flag, `--format json` of every
// read command against a running plumbd (each output one JSON document that
// Debian's Python reads and that protobuf parses back, unknown fields
// refused, into the reply the RPC gives), and the bash completion script
// run by bash.
#include <grpcpp/create_channel.h>
#include <grpcpp/security/credentials.h>

#include <algorithm>
#include <filesystem>
#include <memory>
#include <set>
#include <string>
#include <vector>

#include "absl/strings/str_cat.h"
#include "absl/strings/str_format.h"
#include "absl/strings/str_join.h"
#include "absl/strings/str_split.h"
#include "gmock/gmock.h"
#include "google/protobuf/util/json_util.h"
#include "google/protobuf/util/message_differencer.h"
#include "gtest/gtest.h"
#include "plumbline/v1/monitor.grpc.pb.h"
#include "plumbline/v1/registry.grpc.pb.h"
#include "plumbline/v1/scoring.grpc.pb.h"
#include "tests/testing/process.h"
#include "tests/testing/test_sets.h"

namespace plumbline::daemon {
namespace {

using ::testing::HasSubstr;
using ::testing::IsEmpty;
using testing::PlumbdProcess;
using testing::ProcessResult;
using ::testing::StartsWith;
using testing::TempDir;

ProcessResult RunArgs(const std::vector<std::string>& argv,
                      const std::string& dir) {
  absl::StatusOr<ProcessResult> result = testing::RunProcess(argv, dir);
  EXPECT_TRUE(result.ok()) << result.status();
  return result.ok() ? *result : ProcessResult();
}

TEST(PlumbctlBinaryTest, BothProgramsPrintTheProjectVersion) {
  TempDir dir;
  // PLUMBLINE_PROJECT_VERSION: the top CMakeLists.txt's project() version.
  const ProcessResult plumbd = RunArgs({PLUMBD_PATH, "--version"}, dir.path());
  EXPECT_EQ(plumbd.exit_code, 0);
  EXPECT_EQ(plumbd.out,
            absl::StrCat("plumbd ", PLUMBLINE_PROJECT_VERSION, "\n"));
  const ProcessResult plumbctl =
      RunArgs({PLUMBCTL_PATH, "--version"}, dir.path());
  EXPECT_EQ(plumbctl.exit_code, 0);
  EXPECT_EQ(plumbctl.out,
            absl::StrCat("plumbctl ", PLUMBLINE_PROJECT_VERSION, "\n"));
  // plumbd's help lists its flags (help2man makes plumbd(8) from it).
  const ProcessResult help = RunArgs({PLUMBD_PATH, "--help"}, dir.path());
  EXPECT_EQ(help.exit_code, 0);
  for (const char* flag : {"--config", "--sets", "--listen", "--ledger",
                           "--metrics_listen", "--ready_file", "--version"}) {
    EXPECT_THAT(help.out, HasSubstr(absl::StrCat("\n  ", flag, "\n")));
  }
}

TEST(PlumbctlBinaryTest, MisplacedFlagExitsTwoNamingIt) {
  TempDir dir;
  const ProcessResult run =
      RunArgs({PLUMBCTL_PATH, "health", "--set", "courier", "--version", "v2"},
              dir.path());
  EXPECT_EQ(run.exit_code, 2);
  EXPECT_THAT(run.out, IsEmpty());
  EXPECT_THAT(
      run.err,
      StartsWith("plumbctl: health: unknown flag --version (a flag of "
                 "fit, approve, activate, shadow, show)\nusage: plumbctl "
                 "health --set NAME [--format text|json]\n"));
}

// A plumbd with the courier set, some scores and their outcomes.
class FormatJsonTest : public ::testing::Test {
 protected:
  void SetUp() override {
    std::filesystem::create_directory(dir_.File("sets"));
    ASSERT_TRUE(testing::WriteTextFile(dir_.File("sets/courier.json"),
                                       testing::CourierSetJson("courier", "v1"))
                    .ok());
    ASSERT_TRUE(testing::WriteTextFile(dir_.File("plumbd.json"),
                                       R"({"drift_policy": {"tick_seconds": 1,
                                       "min_labelled": 1, "min_scored": 1}})")
                    .ok());
    absl::StatusOr<std::unique_ptr<PlumbdProcess>> plumbd =
        PlumbdProcess::Start(dir_.path(), {"--config", dir_.File("plumbd.json"),
                                           "--sets", dir_.File("sets"),
                                           "--ledger", dir_.File("ledger.db")});
    ASSERT_TRUE(plumbd.ok()) << plumbd.status();
    plumbd_ = *std::move(plumbd);
    // Four scores, four outcomes: every window figure can be computed.
    ASSERT_TRUE(testing::WriteTextFile(
                    dir_.File("records.csv"),
                    "record_id,distance_km,region,hour\nj-1,9,rural,18\n"
                    "j-2,3,urban,8\nj-3,4,suburban,12\nj-4,12,rural,20\n")
                    .ok());
    ASSERT_TRUE(testing::WriteTextFile(dir_.File("outcomes.csv"),
                                       "record_id,label\nj-1,1\nj-2,0\n"
                                       "j-3,0\nj-4,1\n")
                    .ok());
    ASSERT_EQ(
        Plumbctl({"score", "--set", "courier", "--csv",
                  dir_.File("records.csv"), "--out", dir_.File("scored.csv")})
            .exit_code,
        0);
    ASSERT_EQ(
        Plumbctl({"outcomes", "--csv", dir_.File("outcomes.csv")}).exit_code,
        0);
  }
  void TearDown() override { plumbd_.reset(); }

  ProcessResult Plumbctl(std::vector<std::string> args) {
    args.insert(args.begin(), {PLUMBCTL_PATH, "--addr", plumbd_->addr()});
    return RunArgs(args, dir_.path());
  }

  // Runs `args` with --format json; expects one JSON document that Debian's
  // Python reads, parses it into `message` with unknown fields refused, and
  // expects its top-level keys to be the message's field names (.proto
  // names): every field but an unset one that has presence.
  void ReadJson(const std::vector<std::string>& args,
                google::protobuf::Message* message) {
    std::vector<std::string> with_format = args;
    with_format.insert(with_format.end(), {"--format", "json"});
    const ProcessResult run = Plumbctl(with_format);
    ASSERT_EQ(run.exit_code, 0) << run.err;
    google::protobuf::util::JsonParseOptions strict;
    strict.ignore_unknown_fields = false;
    const auto parsed =
        google::protobuf::util::JsonStringToMessage(run.out, message, strict);
    ASSERT_TRUE(parsed.ok()) << parsed.message() << "\n" << run.out;

    const std::string path = dir_.File("reply.json");
    ASSERT_TRUE(testing::WriteTextFile(path, run.out).ok());
    const ProcessResult python = RunArgs({PLUMBLINE_PYTHON, "-c",
                                          "import json, sys\n"
                                          "doc = json.load(open(sys.argv[1]))\n"
                                          "print(' '.join(sorted(doc)))\n",
                                          path},
                                         dir_.path());
    ASSERT_EQ(python.exit_code, 0) << python.err << run.out;
    std::vector<std::string> keys;
    const google::protobuf::Descriptor* type = message->GetDescriptor();
    for (int i = 0; i < type->field_count(); ++i) {
      const google::protobuf::FieldDescriptor* field = type->field(i);
      // Unset fields with presence (messages, `optional` scalars) are left
      // out; every other field is printed, default or not.
      if (field->has_presence() &&
          !message->GetReflection()->HasField(*message, field)) {
        continue;
      }
      keys.push_back(field->name());
    }
    std::sort(keys.begin(), keys.end());
    EXPECT_EQ(python.out, absl::StrCat(absl::StrJoin(keys, " "), "\n"))
        << run.out;
  }

  std::shared_ptr<grpc::Channel> Channel() {
    return grpc::CreateChannel(plumbd_->addr(),
                               grpc::InsecureChannelCredentials());
  }

  TempDir dir_;
  std::unique_ptr<PlumbdProcess> plumbd_;
};

TEST_F(FormatJsonTest, EveryReadCommandPrintsItsReplyMessage) {
  using google::protobuf::util::MessageDifferencer;
  // sets: the ListSetsReply, as the RPC gives it.
  v1::ListSetsReply sets;
  ReadJson({"sets"}, &sets);
  {
    grpc::ClientContext context;
    v1::ListSetsReply rpc;
    ASSERT_TRUE(v1::Scoring::NewStub(Channel())
                    ->ListSets(&context, v1::ListSetsRequest(), &rpc)
                    .ok());
    EXPECT_TRUE(MessageDifferencer::Equals(sets, rpc))
        << sets.DebugString() << rpc.DebugString();
  }
  // versions and audit: the Registry's replies.
  v1::ListVersionsReply versions;
  ReadJson({"versions", "--set", "courier"}, &versions);
  ASSERT_EQ(versions.versions_size(), 1);
  EXPECT_EQ(versions.versions(0).version(), "v1");
  EXPECT_EQ(versions.versions(0).state(), v1::ACTIVE);
  v1::AuditReply audit;
  ReadJson({"audit", "--set", "courier"}, &audit);
  {
    grpc::ClientContext context;
    v1::AuditRequest request;
    request.set_set("courier");
    v1::AuditReply rpc;
    ASSERT_TRUE(
        v1::Registry::NewStub(Channel())->Audit(&context, request, &rpc).ok());
    EXPECT_TRUE(MessageDifferencer::Equals(audit, rpc));
  }
  // health: once the monitor has evaluated the four outcomes, the same
  // figures as the Monitor RPC's, at full precision (the tick is 1 s, so
  // the two reads may see different evaluations: they are compared only
  // when they carry the same evaluation time).
  const auto rpc_health = [&] {
    grpc::ClientContext context;
    v1::GetSetHealthRequest request;
    request.set_set("courier");
    v1::SetHealth rpc;
    EXPECT_TRUE(v1::Monitor::NewStub(Channel())
                    ->GetSetHealth(&context, request, &rpc)
                    .ok());
    return rpc;
  };
  ASSERT_TRUE(testing::PollUntil([&] {
    const v1::SetHealth h = rpc_health();
    return h.has_evaluated_at() && h.windows_size() > 0 &&
           h.windows(0).labelled() == 4;
  }));
  v1::SetHealth health;
  ReadJson({"health", "--set", "courier"}, &health);
  EXPECT_TRUE(health.has_evaluated_at());
  const v1::SetHealth rpc = rpc_health();
  if (MessageDifferencer::Equals(rpc.evaluated_at(), health.evaluated_at())) {
    EXPECT_TRUE(MessageDifferencer::Equals(health, rpc))
        << health.DebugString() << rpc.DebugString();
  }
  ASSERT_TRUE(health.windows(0).log_loss().defined());
  // The text form rounds the same figure to six significant digits.
  const ProcessResult text = Plumbctl({"health", "--set", "courier"});
  EXPECT_THAT(text.out, HasSubstr(absl::StrFormat(
                            "%.6g", health.windows(0).brier_score().value())));
}

// load refuses a version whose features differ from the active one's
// unless --allow_schema_change says so; show and diff print the Registry's
// replies as the RPCs give them.
TEST_F(FormatJsonTest, SchemaChangeNeedsTheSwitchAndReviewCommandsPrintJson) {
  using google::protobuf::util::MessageDifferencer;
  // v2 of "courier" has one numeric feature "stops" instead of three.
  ASSERT_TRUE(testing::WriteTextFile(dir_.File("v2.json"),
                                     testing::DepotSetJson("courier", "v2"))
                  .ok());
  const ProcessResult refused =
      Plumbctl({"load", "--set_file", dir_.File("v2.json")});
  EXPECT_EQ(refused.exit_code, 1);
  EXPECT_THAT(refused.err, HasSubstr("FAILED_PRECONDITION"));
  EXPECT_THAT(refused.err, HasSubstr("--allow_schema_change"));
  v1::ListVersionsReply versions;
  ReadJson({"versions", "--set", "courier"}, &versions);
  EXPECT_EQ(versions.versions_size(), 1);  // nothing was stored

  const ProcessResult allowed = Plumbctl(
      {"load", "--set_file", dir_.File("v2.json"), "--allow_schema_change"});
  ASSERT_EQ(allowed.exit_code, 0) << allowed.err;
  ReadJson({"versions", "--set", "courier"}, &versions);
  ASSERT_EQ(versions.versions_size(), 2);
  v1::AuditReply audit;
  ReadJson({"audit", "--set", "courier"}, &audit);
  EXPECT_THAT(audit.DebugString(), HasSubstr("schema_change_allowed"));

  // show (default: the active version) and show --version v2.
  for (const std::string version : {"", "v2"}) {
    v1::VersionDetail detail;
    std::vector<std::string> args = {"show", "--set", "courier"};
    if (!version.empty()) args.insert(args.end(), {"--version", version});
    ReadJson(args, &detail);
    grpc::ClientContext context;
    v1::ShowVersionRequest request;
    request.set_set("courier");
    request.set_version(version);
    v1::VersionDetail rpc;
    ASSERT_TRUE(v1::Registry::NewStub(Channel())
                    ->ShowVersion(&context, request, &rpc)
                    .ok());
    EXPECT_TRUE(MessageDifferencer::Equals(detail, rpc))
        << detail.DebugString() << rpc.DebugString();
  }
  // diff: active v1 against the newest candidate v2.
  v1::VersionDiff diff;
  ReadJson({"diff", "--set", "courier"}, &diff);
  {
    grpc::ClientContext context;
    v1::DiffVersionsRequest request;
    request.set_set("courier");
    v1::VersionDiff rpc;
    ASSERT_TRUE(v1::Registry::NewStub(Channel())
                    ->DiffVersions(&context, request, &rpc)
                    .ok());
    EXPECT_TRUE(MessageDifferencer::Equals(diff, rpc))
        << diff.DebugString() << rpc.DebugString();
  }
  // The text form names both versions and a feature only one of them has.
  const ProcessResult text = Plumbctl({"diff", "--set", "courier"});
  ASSERT_EQ(text.exit_code, 0) << text.err;
  EXPECT_THAT(text.out, HasSubstr("v1"));
  EXPECT_THAT(text.out, HasSubstr("v2"));
  EXPECT_THAT(text.out, HasSubstr("stops"));
  // An unknown version is NOT_FOUND, exit 1.
  const ProcessResult unknown =
      Plumbctl({"show", "--set", "courier", "--version", "v9"});
  EXPECT_EQ(unknown.exit_code, 1);
  EXPECT_THAT(unknown.err, HasSubstr("NOT_FOUND"));
  // dossier without --out and without --format json is a usage error.
  EXPECT_EQ(Plumbctl({"dossier", "--set", "courier"}).exit_code, 2);
}

// `plumbctl record`: what the ledger keeps of one record, the features read
// back from the packed row by name as they were sent, the outcome beside.
TEST_F(FormatJsonTest, RecordShowsTheStoredScoreFeaturesAndOutcome) {
  v1::RecordDetail record;
  ReadJson({"record", "--set", "courier", "--record_id", "j-3"}, &record);
  {
    grpc::ClientContext context;
    v1::GetRecordRequest request;
    request.set_set("courier");
    request.set_record_id("j-3");
    v1::RecordDetail rpc;
    ASSERT_TRUE(v1::Registry::NewStub(Channel())
                    ->GetRecord(&context, request, &rpc)
                    .ok());
    EXPECT_TRUE(
        google::protobuf::util::MessageDifferencer::Equals(record, rpc));
  }
  ASSERT_EQ(record.scores_size(), 1);
  const v1::StoredScore& score = record.scores(0);
  EXPECT_EQ(score.version(), "v1");
  EXPECT_EQ(score.role(), "active");
  // j-3 was the CSV row "j-3,4,suburban,12": the CSV's cells as plumbctl
  // sent them (numbers for the numeric features, the level by name).
  const auto& f = score.features().fields();
  EXPECT_EQ(f.at("distance_km").number_value(), 4);
  EXPECT_EQ(f.at("region").string_value(), "suburban");
  EXPECT_EQ(f.at("hour").number_value(), 12);
  // The score as scored.csv has it (%.17g, plumbctl's CSV form).
  const std::string scored = testing::ReadTextFile(dir_.File("scored.csv"));
  EXPECT_THAT(scored, HasSubstr(absl::StrFormat("%.17g", score.log_odds())))
      << scored;
  EXPECT_TRUE(record.has_label());
  EXPECT_EQ(record.label(), 0);
  // Text form: one line per score, the outcome below.
  const ProcessResult text =
      Plumbctl({"record", "--set", "courier", "--record_id", "j-3"});
  ASSERT_EQ(text.exit_code, 0) << text.err;
  EXPECT_THAT(text.out, HasSubstr("record j-3 of set courier"));
  EXPECT_THAT(text.out, HasSubstr("\"region\":\"suburban\""));
  EXPECT_THAT(text.out, HasSubstr("outcome 0"));
  // An id the set never scored is NOT_FOUND naming it.
  const ProcessResult unknown =
      Plumbctl({"record", "--set", "courier", "--record_id", "j-99"});
  EXPECT_EQ(unknown.exit_code, 1);
  EXPECT_THAT(unknown.err, HasSubstr("NOT_FOUND"));
  EXPECT_THAT(unknown.err, HasSubstr("j-99"));
}

TEST(PlumbctlBinaryTest, BashCompletionFromTheCommandTable) {
  TempDir dir;
  const ProcessResult script =
      RunArgs({PLUMBCTL_PATH, "completion", "bash"}, dir.path());
  ASSERT_EQ(script.exit_code, 0) << script.err;
  ASSERT_TRUE(
      testing::WriteTextFile(dir.File("plumbctl.bash"), script.out).ok());
  // Completes the words after `plumbctl` as bash would: one line per
  // candidate.
  const auto complete = [&](const std::string& words) {
    const ProcessResult run =
        RunArgs({"/bin/bash", "-c",
                 absl::StrCat("source ", dir.File("plumbctl.bash"), "\n",
                              "COMP_WORDS=(plumbctl ", words, ")\n",
                              "COMP_CWORD=$((${#COMP_WORDS[@]} - 1))\n"
                              "_plumbctl\n"
                              "printf '%s\\n' \"${COMPREPLY[@]}\"\n")},
                dir.path());
    EXPECT_EQ(run.exit_code, 0) << run.err;
    std::vector<std::string> out =
        absl::StrSplit(run.out, '\n', absl::SkipEmpty());
    std::sort(out.begin(), out.end());
    return out;
  };
  using ::testing::ElementsAre;
  EXPECT_THAT(complete("he"), ElementsAre("health", "help"));
  EXPECT_THAT(complete("--addr x:1 ver"), ElementsAre("versions"));
  EXPECT_THAT(
      complete("health --"),
      ElementsAre("--addr", "--format", "--help", "--set", "--timeout_ms",
                  "--tls_ca", "--tls_cert", "--tls_key", "--token"));
  EXPECT_THAT(complete("versions --format ''"), ElementsAre("json", "text"));
  EXPECT_THAT(complete("score --reason_order ''"),
              ElementsAre("lowers", "magnitude", "raises"));
  EXPECT_THAT(complete("token ''"), ElementsAre("new"));
  EXPECT_THAT(complete("token new --role ''"),
              ElementsAre("admin", "metrics", "score"));
  EXPECT_THAT(
      complete(absl::StrCat("score --set-file ", dir.File("plumbctl.b"))),
      ElementsAre(dir.File("plumbctl.bash")));
}

}  // namespace
}  // namespace plumbline::daemon
