// File: tests/bench/refit_latency_bench.cc
//
// Does a running refit move scoring latency? Starts a real plumbd on the
// demo's courier set (ops/demo_data.py output in DATA_DIR), fills its
// ledger with the demo's 4000 labelled parcels, then times single Score
// calls twice in the same run: with the daemon otherwise idle (the
// reference) and while another client runs refit jobs back to back. Prints
// p50, p90 and p99 of both and their ratios. Never run by ctest.
//
//   build/tests/bench/refit_latency_bench DATA_DIR [CALLS]
#include <grpcpp/create_channel.h>
#include <grpcpp/security/credentials.h>

#include <algorithm>
#include <atomic>
#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <string>
#include <thread>
#include <vector>

#include "absl/strings/str_cat.h"
#include "absl/strings/str_split.h"
#include "plumbline/v1/registry.grpc.pb.h"
#include "plumbline/v1/scoring.grpc.pb.h"
#include "tests/testing/process.h"

namespace plumbline::daemon {
namespace {

using testing::PlumbdProcess;
using testing::TempDir;

constexpr char kSet[] = "courier_first_attempt";

int Run(const std::string& data, int calls) {
  TempDir dir;
  std::filesystem::create_directories(dir.File("sets"));
  std::filesystem::copy_file(absl::StrCat(data, "/sets/", kSet, ".json"),
                             dir.File(absl::StrCat("sets/", kSet, ".json")));
  const std::string config = absl::StrCat(
      R"({"sets_dir": ")", dir.File("sets"), R"(", "ledger_path": ")",
      dir.File("ledger.db"),
      R"(", "refit": {"mode": "OFF", "min_labelled": 500, "l2": 1.0}})");
  if (!testing::WriteTextFile(dir.File("plumbd.json"), config).ok()) return 1;
  auto plumbd =
      PlumbdProcess::Start(dir.path(), {"--config", dir.File("plumbd.json")});
  if (!plumbd.ok()) {
    std::fprintf(stderr, "%s\n",
                 std::string(plumbd.status().message()).c_str());
    return 1;
  }
  const std::string addr = (*plumbd)->addr();
  for (const auto& [parcels, outcomes] :
       {std::pair<std::string, std::string>{"parcels.csv", "outcomes.csv"},
        {"parcels_drift.csv", "outcomes_drift.csv"}}) {
    auto scored = testing::RunProcess(
        {PLUMBCTL_PATH, "--addr", addr, "score", "--set", kSet, "--csv",
         absl::StrCat(data, "/", parcels), "--out", dir.File("out.csv")},
        dir.path());
    auto reported =
        testing::RunProcess({PLUMBCTL_PATH, "--addr", addr, "outcomes", "--csv",
                             absl::StrCat(data, "/", outcomes)},
                            dir.path());
    if (!scored.ok() || scored->exit_code != 0 || !reported.ok() ||
        reported->exit_code != 0) {
      std::fprintf(stderr, "could not fill the ledger\n");
      return 1;
    }
  }

  auto channel = grpc::CreateChannel(addr, grpc::InsecureChannelCredentials());
  auto scoring = v1::Scoring::NewStub(channel);
  v1::ScoreRequest request;
  request.set_set(kSet);
  auto& values =
      *request.mutable_record()->mutable_features()->mutable_fields();
  values["distance_km"].set_number_value(23.5);
  values["parcel_weight_kg"].set_number_value(7.2);
  values["hour_of_day"].set_number_value(14);
  values["building_type"].set_string_value("flat");
  values["prior_failed_attempts"].set_number_value(2);
  values["rainfall_mm"].set_number_value(3.0);

  auto measure = [&](const char* what) {
    std::vector<double> us;
    for (int i = 0; i < calls; ++i) {
      grpc::ClientContext context;
      v1::ScoreReply reply;
      const auto start = std::chrono::steady_clock::now();
      grpc::Status status = scoring->Score(&context, request, &reply);
      const auto end = std::chrono::steady_clock::now();
      if (!status.ok()) {
        std::fprintf(stderr, "%s: %s\n", what, status.error_message().c_str());
        std::exit(1);
      }
      us.push_back(
          std::chrono::duration<double, std::micro>(end - start).count());
    }
    std::sort(us.begin(), us.end());
    return std::vector<double>{us[us.size() / 2], us[us.size() * 9 / 10],
                               us[us.size() * 99 / 100]};
  };

  const std::vector<double> idle = measure("idle");
  std::atomic<bool> stop{false};
  std::atomic<int> refits{0};
  std::thread refitter([&] {
    auto registry = v1::Registry::NewStub(channel);
    while (!stop) {
      grpc::ClientContext context;
      v1::RefitRequest r;
      r.set_set(kSet);
      r.set_actor("refit_latency_bench");
      v1::RefitReply reply;
      if (registry->Refit(&context, r, &reply).ok()) ++refits;
    }
  });
  // Let the first job start before timing.
  std::this_thread::sleep_for(std::chrono::milliseconds(200));
  const std::vector<double> busy = measure("during refits");
  stop = true;
  refitter.join();

  std::printf("single Score calls, %d each, same daemon, same run\n", calls);
  std::printf("%-22s %10s %10s %10s\n", "", "p50 us", "p90 us", "p99 us");
  std::printf("%-22s %10.1f %10.1f %10.1f\n", "idle (reference)", idle[0],
              idle[1], idle[2]);
  std::printf("%-22s %10.1f %10.1f %10.1f\n", "refits running", busy[0],
              busy[1], busy[2]);
  std::printf("%-22s %10.2f %10.2f %10.2f\n", "ratio", busy[0] / idle[0],
              busy[1] / idle[1], busy[2] / idle[2]);
  std::printf("refit jobs finished while timing: %d\n", refits.load());
  return 0;
}

}  // namespace
}  // namespace plumbline::daemon

int main(int argc, char** argv) {
  if (argc < 2) {
    std::fprintf(stderr,
                 "usage: refit_latency_bench DATA_DIR [CALLS]\n"
                 "DATA_DIR: ops/demo_data.py --set-out DIR/sets/"
                 "courier_first_attempt.json --demo-dir DIR\n");
    return 2;
  }
  return plumbline::daemon::Run(argv[1], argc > 2 ? std::atoi(argv[2]) : 3000);
}
