// File: tests/daemon/refit/lifecycle_e2e_test.cc
//
// The life of a coefficient set end to end through the real plumbd and
// plumbctl: the demo's courier set (ops/demo_data.py writes it and its
// parcels into the fixture directory, ctest fixture lifecycle_data) serves
// normal weeks and then the storm season; the drift policy starts a refit
// on its own; a manual `plumbctl refit` proposes a candidate whose holdout
// figures are recomputed from the ledger with scikit-learn
// (tests/daemon/lifecycle_check.py); `plumbctl approve` promotes it, fresh
// traffic from the same mix leaves the new version steady, `plumbctl
// rollback` restores the old one, a shadow is scored and never returned,
// and `plumbctl audit` shows every step. A second test checks that a refit
// without enough labels changes nothing, is audited and counted.
//
// Waits poll (no timing assertions); each daemon is killed in TearDown.
#include <algorithm>
#include <atomic>
#include <cstdlib>
#include <filesystem>
#include <map>
#include <memory>
#include <set>
#include <string>
#include <thread>
#include <vector>

#include "absl/strings/match.h"
#include "absl/strings/numbers.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_join.h"
#include "absl/strings/str_split.h"
#include "daemon/ledger/sqlite_db.h"
#include "google/protobuf/struct.pb.h"
#include "google/protobuf/util/json_util.h"
#include "grpcpp/create_channel.h"
#include "grpcpp/security/credentials.h"
#include "gtest/gtest.h"
#include "plumbline/v1/monitor.grpc.pb.h"
#include "plumbline/v1/registry.grpc.pb.h"
#include "plumbline/v1/scoring.grpc.pb.h"
#include "tests/testing/http.h"
#include "tests/testing/process.h"

namespace plumbline::daemon {
namespace {

using testing::FindSample;
using testing::ParseExposition;
using testing::PlumbdProcess;
using testing::PollUntil;
using testing::ProcessResult;
using testing::TempDir;

constexpr char kSet[] = "courier_first_attempt";
constexpr char kHoldoutFraction[] = "0.3";

std::string DataDir() {
  const char* dir = std::getenv("PLUMBLINE_LIFECYCLE_DATA");
  return dir == nullptr ? "" : dir;
}

// The rows of `a` and the first `b_rows` rows of `b` (same header), merged
// evenly (each row at its share of its file), written once per prefix
// (record ids prefixed) to `to`.
void Mix(const std::string& a, const std::string& b, size_t b_rows,
         const std::string& to, const std::vector<std::string>& prefixes) {
  std::vector<std::string> first =
      absl::StrSplit(testing::ReadTextFile(a), '\n', absl::SkipEmpty());
  std::vector<std::string> second =
      absl::StrSplit(testing::ReadTextFile(b), '\n', absl::SkipEmpty());
  ASSERT_GT(first.size(), 1u) << a;
  ASSERT_GT(second.size(), b_rows) << b;
  ASSERT_EQ(first[0], second[0]) << "different headers";
  std::string out = first[0] + "\n";
  const size_t na = first.size() - 1;
  for (const std::string& prefix : prefixes) {
    size_t i = 0, j = 0;
    while (i < na || j < b_rows) {
      // The next row is the one whose share of its file is smaller.
      if (j >= b_rows || (i < na && i * b_rows <= j * na)) {
        absl::StrAppend(&out, prefix, first[1 + i++], "\n");
      } else {
        absl::StrAppend(&out, prefix, second[1 + j++], "\n");
      }
    }
  }
  ASSERT_TRUE(testing::WriteTextFile(to, out).ok());
}

class LifecycleTest : public ::testing::Test {
 protected:
  void SetUp() override {
    ASSERT_FALSE(DataDir().empty())
        << "PLUMBLINE_LIFECYCLE_DATA is not set (run through ctest)";
    std::filesystem::create_directories(dir_.File("sets"));
    std::filesystem::copy_file(absl::StrCat(DataDir(), "/sets/", kSet, ".json"),
                               dir_.File(absl::StrCat("sets/", kSet, ".json")));
  }
  void TearDown() override { plumbd_.reset(); }

  void Start(const std::string& refit_json) {
    const std::string config =
        absl::StrCat(R"({"sets_dir": ")", dir_.File("sets"),
                     R"(", "ledger_path": ")", dir_.File("ledger.db"),
                     R"(", "ledger": {"relaxed_commits": true},
        "windows": {"labelled_count": 4000, "scored_count": 4000,
                    "time_seconds": 86400, "buckets": 10},
        "drift_policy": {"tick_seconds": 1, "min_labelled": 200,
                         "min_scored": 200},
        "refit": )",
                     refit_json, "}");
    ASSERT_TRUE(testing::WriteTextFile(dir_.File("plumbd.json"), config).ok());
    absl::StatusOr<std::unique_ptr<PlumbdProcess>> plumbd =
        PlumbdProcess::Start(dir_.path(),
                             {"--config", dir_.File("plumbd.json")});
    ASSERT_TRUE(plumbd.ok()) << plumbd.status();
    plumbd_ = *std::move(plumbd);
    registry_ = v1::Registry::NewStub(grpc::CreateChannel(
        plumbd_->addr(), grpc::InsecureChannelCredentials()));
    monitor_ = v1::Monitor::NewStub(grpc::CreateChannel(
        plumbd_->addr(), grpc::InsecureChannelCredentials()));
  }

  ProcessResult Plumbctl(std::vector<std::string> args) {
    // --actor is a flag of the commands that change a set's versions.
    static const std::set<std::string> kActs = {
        "load", "approve", "activate", "shadow", "rollback", "refit"};
    if (!args.empty() && kActs.count(args[0]) > 0) {
      args.insert(args.begin() + 1, {"--actor", "test-operator"});
    }
    args.insert(args.begin(), {PLUMBCTL_PATH, "--addr", plumbd_->addr()});
    absl::StatusOr<ProcessResult> result =
        testing::RunProcess(args, dir_.path());
    EXPECT_TRUE(result.ok()) << result.status();
    return result.ok() ? *result : ProcessResult();
  }

  // Scores a parcels CSV and reports its outcomes through plumbctl.
  void Score(const std::string& parcels) {
    ProcessResult scored = Plumbctl({"score", "--set", kSet, "--csv", parcels,
                                     "--out", dir_.File("scored.csv")});
    ASSERT_EQ(scored.exit_code, 0) << scored.err;
  }

  void Report(const std::string& outcomes) {
    ProcessResult reported = Plumbctl({"outcomes", "--csv", outcomes});
    ASSERT_EQ(reported.exit_code, 0) << reported.err;
    ASSERT_TRUE(absl::StrContains(reported.out, "refused 0")) << reported.out;
  }

  void ScoreAndReport(const std::string& parcels, const std::string& outcomes) {
    Score(parcels);
    Report(outcomes);
  }

  std::vector<v1::VersionInfo> Versions() {
    grpc::ClientContext context;
    v1::ListVersionsRequest request;
    request.set_set(kSet);
    v1::ListVersionsReply reply;
    grpc::Status status = registry_->ListVersions(&context, request, &reply);
    EXPECT_TRUE(status.ok()) << status.error_message();
    return {reply.versions().begin(), reply.versions().end()};
  }

  std::string ActiveVersion() {
    for (const v1::VersionInfo& v : Versions()) {
      if (v.state() == v1::ACTIVE) return v.version();
    }
    return "";
  }

  v1::SetHealth Health() {
    grpc::ClientContext context;
    v1::GetSetHealthRequest request;
    request.set_set(kSet);
    v1::SetHealth reply;
    EXPECT_TRUE(monitor_->GetSetHealth(&context, request, &reply).ok());
    return reply;
  }

  std::optional<double> Metric(
      const std::string& name,
      const std::map<std::string, std::string>& labels) {
    const std::string addr = plumbd_->MetricsAddress();
    absl::StatusOr<std::string> body = testing::HttpGet(addr, "/metrics");
    if (!body.ok()) return std::nullopt;
    return FindSample(ParseExposition(*body), name, labels);
  }

  TempDir dir_;
  std::unique_ptr<PlumbdProcess> plumbd_;
  std::unique_ptr<v1::Registry::Stub> registry_;
  std::unique_ptr<v1::Monitor::Stub> monitor_;
};

// The figures of a comparison text: "holdout of 1200 records: log-loss
// active V 0.534905, candidate 0.486883, difference -0.048021 (95% interval
// -0.064742 to -0.031301); margin ...".
struct Comparison {
  int64_t records = 0;
  double active = 0, candidate = 0, difference = 0, lower = 0, upper = 0;
};

Comparison ParseComparison(const std::string& text) {
  Comparison c;
  std::vector<std::string> words = absl::StrSplit(text, ' ', absl::SkipEmpty());
  auto number = [&](size_t i, double* out) {
    std::string value = i < words.size() ? words[i] : "";
    while (!value.empty() && (value.back() == ',' || value.back() == ')' ||
                              value.back() == ';')) {
      value.pop_back();
    }
    EXPECT_TRUE(absl::SimpleAtod(value, out))
        << "'" << value << "' in " << text;
  };
  for (size_t i = 0; i + 1 < words.size(); ++i) {
    if (words[i] == "holdout" && words[i + 1] == "of") {
      EXPECT_TRUE(absl::SimpleAtoi(words[i + 2], &c.records)) << text;
    } else if (words[i] == "active" && words[i - 1] == "log-loss") {
      number(i + 2, &c.active);
    } else if (words[i] == "candidate" && words[i - 1] != "log-loss" &&
               i + 1 < words.size() && absl::EndsWith(words[i + 1], ",")) {
      number(i + 1, &c.candidate);
    } else if (words[i] == "difference") {
      number(i + 1, &c.difference);
    } else if (words[i] == "interval") {
      number(i + 1, &c.lower);
      number(i + 3, &c.upper);
    }
  }
  return c;
}

double Field(const google::protobuf::Struct& s, const std::string& key) {
  auto it = s.fields().find(key);
  EXPECT_TRUE(it != s.fields().end()) << key;
  return it == s.fields().end() ? 0 : it->second.number_value();
}

TEST_F(LifecycleTest, DriftRefitApproveSteadyRollbackAudit) {
  Start(R"({"mode": "PROPOSE", "min_labelled": 500, "l2": 1.0,
            "holdout_fraction": 0.3, "min_new_labelled": 1500})");
  const std::string original = ActiveVersion();
  ASSERT_FALSE(original.empty());
  const std::string data = DataDir();

  // Normal weeks, then the storm season. Its inputs alone make the monitor
  // judge drifting (stability figures); the drift policy's refit waits for
  // 1500 outcomes after that (min_new_labelled), then starts by itself and
  // fits the storm's labels too.
  ScoreAndReport(data + "/parcels.csv", data + "/outcomes.csv");
  // The monitor sees the normal weeks steady before the storm begins: the
  // drift's onset (the last steady evaluation) then separates the storm's
  // records from the weeks before, and the drift job trains on the storm's.
  const absl::Time normal_done = absl::Now();
  ASSERT_TRUE(PollUntil([&] {
    const v1::SetHealth h = Health();
    return h.state() == v1::STEADY && h.has_evaluated_at() &&
           absl::FromUnixSeconds(h.evaluated_at().seconds()) +
                   absl::Nanoseconds(h.evaluated_at().nanos()) >
               normal_done;
  }));
  Score(data + "/parcels_drift.csv");
  ASSERT_TRUE(PollUntil([&] {
    return absl::StrContains(plumbd_->Log(), "event=refit_waits_for_labels");
  })) << plumbd_->Log();
  EXPECT_EQ(Health().state(), v1::DRIFTING);
  EXPECT_FALSE(Metric("plumbline_refit_jobs_total",
                      {{"set", kSet}, {"result", "failed"}})
                   .has_value());
  Report(data + "/outcomes_drift.csv");
  std::string drift_candidate;
  ASSERT_TRUE(PollUntil([&] {
    for (const v1::VersionInfo& v : Versions()) {
      if (v.state() == v1::CANDIDATE) drift_candidate = v.version();
    }
    return !drift_candidate.empty();
  })) << plumbd_->Log()
      << Plumbctl({"audit", "--set", kSet}).out;
  for (const v1::VersionInfo& v : Versions()) {
    if (v.version() != drift_candidate) continue;
    EXPECT_TRUE(absl::StartsWith(v.created_by(), "refit job"))
        << v.created_by();
    EXPECT_TRUE(absl::StrContains(v.created_by(), "(drift)")) << v.created_by();
    EXPECT_TRUE(absl::StartsWith(v.reason(), "drifting:")) << v.reason();
    EXPECT_TRUE(
        absl::StrContains(v.reason(), "new outcomes since the drift was seen"))
        << v.reason();
    EXPECT_TRUE(absl::StrContains(v.comparison(), "candidate wins"));
  }
  // The first job won: none was spent on the labels from before the storm.
  for (const v1::VersionInfo& v : Versions()) {
    if (v.version() == drift_candidate) {
      EXPECT_EQ(v.created_by(), "refit job 1 (drift)");
    }
  }
  EXPECT_EQ(ActiveVersion(), original) << "mode PROPOSE must not promote";

  // A manual refit over every labelled record.
  ProcessResult refit = Plumbctl({"refit", "--set", kSet, "--reason", "test"});
  ASSERT_EQ(refit.exit_code, 0) << refit.err;
  ASSERT_TRUE(absl::StrContains(refit.out, "refit proposed")) << refit.out;
  // plumbctl refit prints the ladder: a row per rung, the closed test, the
  // rung chosen; the comparison used the out-of-time holdout.
  for (const char* part :
       {"updating ladder on 2800 training records", "intercept recalibration",
        "logistic recalibration", "ridge toward the active coefficients",
        "full re-estimation", "rung 4 vs active", "chose rung ",
        "out of time: the latest 1200 by score time"}) {
    EXPECT_TRUE(absl::StrContains(refit.out, part)) << part << "\n"
                                                    << refit.out;
  }
  std::string candidate;
  std::string comparison;
  for (const v1::VersionInfo& v : Versions()) {
    if (v.state() == v1::CANDIDATE && v.version() != drift_candidate) {
      candidate = v.version();
      comparison = v.comparison();
    }
  }
  ASSERT_FALSE(candidate.empty()) << refit.out;

  // The holdout comparison recomputed outside plumbd: lifecycle_check.py
  // re-implements the documented split in Python, takes the active
  // version's stored log-odds and the candidate's document from the ledger,
  // the candidate's holdout scores come from `plumbctl score --set-file`,
  // and the figures from scikit-learn 1.2 sklearn.metrics.log_loss,
  // scipy.stats.sem and scipy.stats.norm.ppf(0.975).
  const std::string out_dir = dir_.File("check");
  std::filesystem::create_directories(out_dir);
  // The check reads packed rows with the package's plumbline.ledger_rows.
  setenv("PYTHONPATH", PLUMBLINE_PYTHON_DIR, 1);
  absl::StatusOr<ProcessResult> check = testing::RunProcess(
      {PLUMBLINE_PYTHON, LIFECYCLE_CHECK_PY, dir_.File("ledger.db"), kSet,
       original, kHoldoutFraction, out_dir},
      dir_.path());
  ASSERT_TRUE(check.ok()) << check.status();
  ASSERT_EQ(check->exit_code, 0) << check->err;
  google::protobuf::Struct split;
  ASSERT_TRUE(
      google::protobuf::util::JsonStringToMessage(check->out, &split).ok())
      << check->out;
  EXPECT_EQ(Field(split, "train") + Field(split, "holdout"), 4000);
  ProcessResult offline =
      Plumbctl({"score", "--set-file", out_dir + "/candidate.json", "--csv",
                out_dir + "/holdout.csv", "--out", out_dir + "/scored.csv"});
  ASSERT_EQ(offline.exit_code, 0) << offline.err;
  absl::StatusOr<ProcessResult> recomputed =
      testing::RunProcess({PLUMBLINE_PYTHON, LIFECYCLE_CHECK_PY, "--compare",
                           out_dir, out_dir + "/scored.csv"},
                          dir_.path());
  ASSERT_TRUE(recomputed.ok()) << recomputed.status();
  ASSERT_EQ(recomputed->exit_code, 0) << recomputed->err;
  google::protobuf::Struct reference;
  ASSERT_TRUE(
      google::protobuf::util::JsonStringToMessage(recomputed->out, &reference)
          .ok())
      << recomputed->out;
  const Comparison got = ParseComparison(comparison);
  EXPECT_EQ(got.records, static_cast<int64_t>(Field(reference, "records")))
      << comparison;
  EXPECT_EQ(got.records, static_cast<int64_t>(Field(split, "holdout")));
  // plumbd prints 6 decimals.
  constexpr double kPrinted = 5.1e-7;
  EXPECT_NEAR(got.active, Field(reference, "active_log_loss"), kPrinted);
  EXPECT_NEAR(got.candidate, Field(reference, "candidate_log_loss"), kPrinted);
  EXPECT_NEAR(got.difference, Field(reference, "difference"), kPrinted);
  EXPECT_NEAR(got.lower, Field(reference, "lower_95"), kPrinted);
  EXPECT_NEAR(got.upper, Field(reference, "upper_95"), kPrinted);
  // The split holds out the share asked for: within 4 binomial standard
  // deviations (sqrt(4000 * 0.3 * 0.7) = 29) of 1200.
  EXPECT_NEAR(static_cast<double>(got.records), 1200.0, 4 * 29.0) << comparison;

  // Approve: the candidate serves at once.
  ProcessResult approve = Plumbctl({"approve", "--set", kSet, "--version",
                                    candidate, "--reason", "holdout reviewed"});
  ASSERT_EQ(approve.exit_code, 0) << approve.err;
  EXPECT_EQ(ActiveVersion(), candidate);

  // Fresh traffic from the mix the candidate was fitted on: its own windows
  // judge it steady. The out-of-time holdout held out the latest 1200
  // records (the storm's last 1200 parcels), so it was fitted on the normal
  // weeks and the storm's first 800 parcels: the same mix, merged evenly so
  // that every window holds both seasons in that share, twice over.
  Mix(data + "/parcels.csv", data + "/parcels_drift.csv", 800,
      dir_.File("mix.csv"), {"again-", "again2-"});
  Mix(data + "/outcomes.csv", data + "/outcomes_drift.csv", 800,
      dir_.File("mix_outcomes.csv"), {"again-", "again2-"});
  ScoreAndReport(dir_.File("mix.csv"), dir_.File("mix_outcomes.csv"));
  v1::SetHealth health;
  ASSERT_TRUE(PollUntil([&] {
    health = Health();
    return health.version() == candidate && health.windows_size() > 0 &&
           health.windows(0).labelled() >= 4000;
  })) << health.DebugString();
  EXPECT_EQ(health.state(), v1::STEADY) << health.DebugString();

  // Shadow the drift job's candidate: scored beside the active version,
  // kept in the ledger, never returned. The drift job fitted the storm's
  // parcels only (since the drift's onset), which hold no 'warehouse'
  // building, a level the manual refit now active learned from the normal
  // weeks: the shadow needs that change allowed, and the audit records it.
  ProcessResult refused =
      Plumbctl({"shadow", "--set", kSet, "--version", drift_candidate});
  EXPECT_NE(refused.exit_code, 0);
  EXPECT_TRUE(absl::StrContains(refused.err, "loses level 'warehouse'"))
      << refused.err;
  ProcessResult shadow = Plumbctl({"shadow", "--set", kSet, "--version",
                                   drift_candidate, "--allow_schema_change"});
  ASSERT_EQ(shadow.exit_code, 0) << shadow.err;
  ProcessResult one = Plumbctl(
      {"score", "--set", kSet, "--record_id", "shadow-check", "--json",
       R"({"distance_km": 23.5, "parcel_weight_kg": 7.2, "hour_of_day": 14,
           "building_type": "flat", "prior_failed_attempts": 2,
           "rainfall_mm": null})"});
  ASSERT_EQ(one.exit_code, 0) << one.err;
  EXPECT_TRUE(absl::StrContains(one.out, candidate)) << one.out;
  EXPECT_FALSE(absl::StrContains(one.out, drift_candidate)) << one.out;
  {
    absl::StatusOr<std::unique_ptr<SqliteDb>> db =
        SqliteDb::Open(dir_.File("ledger.db"));
    ASSERT_TRUE(db.ok());
    absl::StatusOr<std::unique_ptr<SqliteStatement>> q = (*db)->Prepare(
        "SELECT role, set_version FROM ledger_scores WHERE record_id = "
        "'shadow-check' ORDER BY role");
    ASSERT_TRUE(q.ok());
    std::vector<std::string> rows;
    while (*(*q)->Step()) {
      rows.push_back(
          absl::StrCat((*q)->ColumnText(0), " ", (*q)->ColumnText(1)));
    }
    EXPECT_EQ(rows, (std::vector<std::string>{"active " + candidate,
                                              "shadow " + drift_candidate}));
  }

  // Rollback restores the version that served before.
  ProcessResult rollback = Plumbctl({"rollback", "--set", kSet});
  ASSERT_EQ(rollback.exit_code, 0) << rollback.err;
  EXPECT_EQ(ActiveVersion(), original);
  ASSERT_TRUE(PollUntil([&] { return Health().version() == original; }));

  // The audit, oldest first, names every step with its actor.
  ProcessResult audit = Plumbctl({"audit", "--set", kSet});
  ASSERT_EQ(audit.exit_code, 0) << audit.err;
  std::vector<std::string> actions;
  for (absl::string_view line : absl::StrSplit(audit.out, '\n')) {
    std::vector<std::string> words =
        absl::StrSplit(line, ' ', absl::SkipEmpty());
    if (words.size() >= 3 && words[0] != "time") {
      actions.push_back(absl::StrCat(words[1], " ", words[2]));
    }
  }
  auto position = [&](const std::string& entry) {
    for (size_t i = 0; i < actions.size(); ++i) {
      if (actions[i] == entry) return static_cast<int>(i);
    }
    ADD_FAILURE() << "audit lacks '" << entry << "':\n" << audit.out;
    return -1;
  };
  const int loaded = position(original + " loaded");
  const int fit = position(candidate + " fit");
  const int compared = position(candidate + " compared");
  const int approved = position(candidate + " approved");
  const int activated = position(candidate + " activated");
  const int shadowed = position(drift_candidate + " shadowed");
  const int rolled_back = position(original + " rolled_back");
  EXPECT_LT(loaded, fit);
  EXPECT_LT(fit, compared);
  EXPECT_LT(compared, approved);
  EXPECT_LT(approved, activated);
  EXPECT_LT(activated, shadowed);
  EXPECT_LT(shadowed, rolled_back);
  EXPECT_TRUE(absl::StrContains(audit.out, "test-operator")) << audit.out;

  // Both jobs proposed; none failed.
  EXPECT_EQ(Metric("plumbline_refit_jobs_total",
                   {{"set", kSet}, {"result", "proposed"}}),
            2.0);
}

TEST_F(LifecycleTest, RefitWithTooFewLabelsChangesNothing) {
  Start(R"({"mode": "AUTO", "min_labelled": 1000})");
  const std::string original = ActiveVersion();
  // 2000 scored, but only the first file's outcomes are below... report a
  // few hundred: write the first 300 outcome lines.
  std::vector<std::string> lines =
      absl::StrSplit(testing::ReadTextFile(DataDir() + "/outcomes.csv"), '\n',
                     absl::SkipEmpty());
  lines.resize(301);
  ASSERT_TRUE(testing::WriteTextFile(dir_.File("few.csv"),
                                     absl::StrJoin(lines, "\n") + "\n")
                  .ok());
  ScoreAndReport(DataDir() + "/parcels.csv", dir_.File("few.csv"));

  ProcessResult refit = Plumbctl({"refit", "--set", kSet});
  ASSERT_EQ(refit.exit_code, 0) << refit.err;
  EXPECT_TRUE(absl::StrContains(refit.out, "refit: no candidate")) << refit.out;
  EXPECT_TRUE(absl::StrContains(refit.out, "too few labelled records: 300"))
      << refit.out;
  EXPECT_EQ(ActiveVersion(), original);
  EXPECT_EQ(Versions().size(), 1u);
  ProcessResult audit = Plumbctl({"audit", "--set", kSet});
  EXPECT_TRUE(absl::StrContains(audit.out, "fit_failed")) << audit.out;
  EXPECT_EQ(Metric("plumbline_refit_jobs_total",
                   {{"set", kSet}, {"result", "failed"}}),
            1.0);
}

TEST_F(LifecycleTest, SwapsUnderLoadFailNoRequest) {
  Start(R"({"mode": "OFF"})");
  const std::string original = ActiveVersion();
  // A second version of the same set, loaded as a candidate.
  std::string json =
      testing::ReadTextFile(absl::StrCat(DataDir(), "/sets/", kSet, ".json"));
  const std::string from = absl::StrCat("\"version\": \"", original, "\"");
  const size_t at = json.find(from);
  ASSERT_NE(at, std::string::npos) << from;
  json.replace(at, from.size(), "\"version\": \"swap-test\"");
  ASSERT_TRUE(testing::WriteTextFile(dir_.File("swap.json"), json).ok());
  ProcessResult load = Plumbctl({"load", "--set-file", dir_.File("swap.json")});
  ASSERT_EQ(load.exit_code, 0) << load.err;

  // One client scores batches without pause while the versions swap.
  std::atomic<bool> stop{false};
  std::atomic<int> calls{0}, failures{0};
  std::string first_failure;
  std::thread client([&] {
    auto scoring = v1::Scoring::NewStub(grpc::CreateChannel(
        plumbd_->addr(), grpc::InsecureChannelCredentials()));
    v1::ScoreBatchRequest request;
    request.set_set(kSet);
    for (int i = 0; i < 20; ++i) {
      auto& f = *request.add_records()->mutable_features()->mutable_fields();
      f["distance_km"].set_number_value(2.0 + i);
      f["parcel_weight_kg"].set_number_value(1.5);
      f["hour_of_day"].set_number_value(10);
      f["building_type"].set_string_value("flat");
      f["prior_failed_attempts"].set_number_value(0);
      f["rainfall_mm"].set_number_value(1.0);
    }
    while (!stop) {
      grpc::ClientContext context;
      v1::ScoreBatchReply reply;
      grpc::Status status = scoring->ScoreBatch(&context, request, &reply);
      ++calls;
      if (!status.ok() && failures++ == 0)
        first_failure = status.error_message();
    }
  });
  ASSERT_TRUE(PollUntil([&] { return calls >= 20; }));
  for (int round = 0; round < 10; ++round) {
    // Traffic between swaps, so calls overlap every swap.
    const int before = calls;
    ASSERT_TRUE(PollUntil([&] { return calls >= before + 5; }));
    grpc::ClientContext c1;
    v1::VersionRequest activate;
    activate.set_set(kSet);
    activate.set_version("swap-test");
    v1::VersionInfo info;
    ASSERT_TRUE(registry_->Activate(&c1, activate, &info).ok());
    grpc::ClientContext c2;
    v1::RollbackRequest rollback;
    rollback.set_set(kSet);
    ASSERT_TRUE(registry_->Rollback(&c2, rollback, &info).ok());
    EXPECT_EQ(info.version(), original);
  }
  stop = true;
  client.join();
  EXPECT_GE(calls.load(), 70);
  EXPECT_EQ(failures.load(), 0) << first_failure;
  EXPECT_EQ(ActiveVersion(), original);
}

}  // namespace
}  // namespace plumbline::daemon
