// File: daemon/plumbctl_main.cc
//
// plumbctl: the operator's command line for plumbd. See kUsage below.
// Exit status: 0 success, 1 a failed operation ("plumbctl: CODE: message"),
// 2 a usage error.
#include <cstdio>
#include <iostream>
#include <string>
#include <vector>

#include "absl/flags/flag.h"
#include "absl/status/status.h"
#include "absl/strings/str_cat.h"
#include "absl/time/time.h"
#include "daemon/flag_parsing.h"
#include "daemon/plumbctl_commands.h"

ABSL_FLAG(std::string, addr, "127.0.0.1:7390", "plumbd gRPC address");
ABSL_FLAG(int, timeout_ms, 10000, "deadline of each RPC, in milliseconds");
ABSL_FLAG(bool, verbose, false, "sets: also list each set's features");
ABSL_FLAG(std::string, set, "", "score: name of a set loaded in plumbd");
ABSL_FLAG(std::string, set_file, "",
          "score: score offline with this set file, without plumbd");
ABSL_FLAG(std::string, json, "", "score: one record as a JSON object");
ABSL_FLAG(std::string, csv, "", "score: CSV file of records (header row)");
ABSL_FLAG(std::string, out, "", "score --csv: output file (default stdout)");
ABSL_FLAG(std::string, record_id, "", "score --json: the record's id");
ABSL_FLAG(int, batch, 1000, "score --csv: records per ScoreBatch call");
ABSL_FLAG(int, reasons, 0, "number of reason codes per record");
ABSL_FLAG(std::string, reason_order, "raises",
          "reason order: raises, lowers or magnitude");

namespace plumbline::daemon {
namespace {

constexpr char kUsage[] =
    R"(usage: plumbctl [--addr HOST:PORT] [--timeout_ms MS] COMMAND [flags]

commands:
  sets [--verbose]
      List the coefficient sets plumbd has loaded (--verbose: each feature's
      kind, levels and missing-value rule).
  score --set NAME --json '{"feature": value, ...}'
        [--record_id ID] [--reasons K] [--reason_order raises|lowers|magnitude]
      Score one record through plumbd.
  score --set NAME --csv FILE [--out FILE] [--batch N] [--reasons K]
      Score a CSV file (header row) through plumbd in batches of N
      (default 1000); writes the input columns plus record_id, log_odds,
      probability and reason_1..reason_K.
  score --set-file SET.json (--csv FILE [--out FILE] | --json '{...}')
      Score offline with a set file, without plumbd.

flags may be written with '-' or '_' (--set-file, --set_file).
--addr defaults to 127.0.0.1:7390, --timeout_ms to 10000.
)";

int UsageError(absl::string_view message) {
  std::cerr << "plumbctl: " << message << "\n\n" << kUsage;
  return 2;
}

int Failure(const absl::Status& status) {
  std::cerr << "plumbctl: " << absl::StatusCodeToString(status.code()) << ": "
            << status.message() << "\n";
  return 1;
}

int Main(int argc, char** argv) {
  if (WantsHelp(argc, argv)) {
    std::cout << kUsage;
    return 0;
  }
  absl::StatusOr<std::vector<std::string>> args = ParseFlags(argc, argv);
  if (!args.ok()) return UsageError(args.status().message());
  if (args->empty()) return UsageError("no command given");
  const std::string& command = (*args)[0];
  if (command == "help") {
    std::cout << kUsage;
    return 0;
  }
  if (args->size() > 1) {
    return UsageError(absl::StrCat("unexpected argument '", (*args)[1], "'"));
  }
  ClientOptions client;
  client.addr = absl::GetFlag(FLAGS_addr);
  const int timeout_ms = absl::GetFlag(FLAGS_timeout_ms);
  if (timeout_ms <= 0) return UsageError("--timeout_ms must be > 0");
  client.timeout = absl::Milliseconds(timeout_ms);

  if (command == "sets") {
    absl::Status s =
        RunSetsCommand(client, absl::GetFlag(FLAGS_verbose), std::cout);
    return s.ok() ? 0 : Failure(s);
  }
  if (command != "score") {
    return UsageError(absl::StrCat("unknown command '", command, "'"));
  }
  ScoreCommandOptions options;
  options.set = absl::GetFlag(FLAGS_set);
  options.set_file = absl::GetFlag(FLAGS_set_file);
  options.json = absl::GetFlag(FLAGS_json);
  options.csv = absl::GetFlag(FLAGS_csv);
  options.out = absl::GetFlag(FLAGS_out);
  options.record_id = absl::GetFlag(FLAGS_record_id);
  options.batch = absl::GetFlag(FLAGS_batch);
  if (options.set.empty() == options.set_file.empty()) {
    return UsageError("score needs exactly one of --set and --set-file");
  }
  if (options.json.empty() == options.csv.empty()) {
    return UsageError("score needs exactly one of --json and --csv");
  }
  if (!options.json.empty() && !options.out.empty()) {
    return UsageError("--out goes with --csv, not --json");
  }
  if (options.batch <= 0) return UsageError("--batch must be > 0");
  const int reasons = absl::GetFlag(FLAGS_reasons);
  if (reasons < 0) return UsageError("--reasons must be >= 0");
  absl::StatusOr<v1::ReasonOrder> order =
      ParseReasonOrder(absl::GetFlag(FLAGS_reason_order));
  if (!order.ok()) return UsageError(order.status().message());
  options.reasons.set_top(static_cast<uint32_t>(reasons));
  options.reasons.set_order(*order);

  absl::Status s = RunScoreCommand(client, options, std::cout, std::cerr);
  return s.ok() ? 0 : Failure(s);
}

}  // namespace
}  // namespace plumbline::daemon

int main(int argc, char** argv) {
  return plumbline::daemon::Main(argc, argv);
}
