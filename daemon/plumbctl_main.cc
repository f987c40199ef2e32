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
#include "daemon/csv_outcomes.h"
#include "daemon/plumbctl_commands.h"
#include "daemon/plumbctl_health.h"
#include "daemon/plumbctl_outcomes.h"

ABSL_FLAG(std::string, addr, "127.0.0.1:7390", "plumbd gRPC address");
ABSL_FLAG(int, timeout_ms, 10000, "deadline of each RPC, in milliseconds");
ABSL_FLAG(bool, verbose, false, "sets: also list each set's features");
ABSL_FLAG(std::string, set, "",
          "score, health: name of a set loaded in plumbd");
ABSL_FLAG(std::string, set_file, "",
          "score: score offline with this set file, without plumbd");
ABSL_FLAG(std::string, json, "", "score: one record as a JSON object");
ABSL_FLAG(std::string, csv, "",
          "score: CSV file of records; outcomes: CSV file of outcomes "
          "(header row)");
ABSL_FLAG(std::string, out, "", "score --csv: output file (default stdout)");
ABSL_FLAG(std::string, record_id, "",
          "score --json, outcome: the record's id");
ABSL_FLAG(int, batch, 1000,
          "score --csv, outcomes --csv: records per ScoreBatch or "
          "ReportOutcomes call");
ABSL_FLAG(std::string, label, "", "outcome: 1 if the event happened, else 0");
ABSL_FLAG(std::string, observed_at, "",
          "outcome: when it was observed, RFC 3339 or unix seconds (default: "
          "when reported)");
ABSL_FLAG(std::string, refusals_out, "",
          "outcomes --csv: write every refused outcome to this CSV file");
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
  outcomes --csv FILE [--batch N] [--refusals_out FILE]
      Report outcomes from a CSV file with the columns record_id, label (0 or
      1) and optionally observed_at (RFC 3339 or unix seconds), in batches of
      N (default 1000). Prints "accepted N, refused M" and the first refusals;
      --refusals_out writes them all. Exit 0 unless a call fails.
  outcome --record_id ID --label 0|1 [--observed_at TIME]
      Report one outcome.
  health --set NAME
      The set's model health as plumbd's monitor last evaluated it: the drift
      state (steady, watch, drifting) and why, the figures of the count and
      time windows (log-loss, Brier score, AUC, calibration, Hosmer-Lemeshow,
      score PSI) and per feature the PSI, missing and out-of-range rates.

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

int OutcomesMain(const ClientOptions& client) {
  const std::string csv_path = absl::GetFlag(FLAGS_csv);
  if (csv_path.empty()) return UsageError("outcomes needs --csv FILE");
  OutcomesCommandOptions options;
  options.batch = absl::GetFlag(FLAGS_batch);
  options.refusals_out = absl::GetFlag(FLAGS_refusals_out);
  if (options.batch <= 0) return UsageError("--batch must be > 0");
  absl::StatusOr<OutcomesCsv> csv = ReadOutcomesCsv(csv_path);
  if (!csv.ok()) {
    // A file of the wrong shape is the caller's to fix, like a bad flag.
    if (csv.status().code() == absl::StatusCode::kInvalidArgument) {
      return UsageError(csv.status().message());
    }
    return Failure(csv.status());
  }
  absl::Status s = RunOutcomesCsvCommand(client, *csv, options, std::cout);
  return s.ok() ? 0 : Failure(s);
}

int OutcomeMain(const ClientOptions& client) {
  v1::Outcome outcome;
  outcome.set_record_id(absl::GetFlag(FLAGS_record_id));
  if (outcome.record_id().empty()) {
    return UsageError("outcome needs --record_id ID");
  }
  absl::StatusOr<int> label = ParseLabel(absl::GetFlag(FLAGS_label));
  if (!label.ok()) {
    return UsageError(absl::StrCat("--label: ", label.status().message()));
  }
  outcome.set_label(*label);
  if (const std::string observed = absl::GetFlag(FLAGS_observed_at);
      !observed.empty()) {
    absl::StatusOr<absl::Time> t = ParseObservedAt(observed);
    if (!t.ok()) {
      return UsageError(absl::StrCat("--observed_at: ", t.status().message()));
    }
    SetObservedAt(*t, &outcome);
  }
  absl::Status s = RunOutcomeCommand(client, outcome, std::cout);
  return s.ok() ? 0 : Failure(s);
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
  if (command == "outcomes") return OutcomesMain(client);
  if (command == "health") {
    const std::string set = absl::GetFlag(FLAGS_set);
    if (set.empty()) return UsageError("health needs --set NAME");
    absl::Status s = RunHealthCommand(client, set, std::cout);
    return s.ok() ? 0 : Failure(s);
  }
  if (command == "outcome") return OutcomeMain(client);
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
