// File: daemon/cli/plumbctl_main.cc
//
// plumbctl: the operator's command line for plumbd. See kUsage below.
// Exit status: 0 success, 1 a failed operation ("plumbctl: CODE: message"),
// 2 a usage error.
#include <unistd.h>

#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <iostream>
#include <string>
#include <vector>

#include "absl/flags/flag.h"
#include "absl/status/status.h"
#include "absl/strings/match.h"
#include "absl/strings/str_cat.h"
#include "absl/time/time.h"
#include "daemon/cli/client.h"
#include "daemon/cli/commands.h"
#include "daemon/cli/fit.h"
#include "daemon/cli/health.h"
#include "daemon/cli/outcomes.h"
#include "daemon/cli/registry.h"
#include "daemon/cli/token.h"
#include "daemon/csv/outcomes.h"
#include "daemon/util/flags.h"

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
ABSL_FLAG(std::string, record_id, "", "score --json, outcome: the record's id");
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
// Reaching a plumbd with access control and TLS (every command that dials).
ABSL_FLAG(std::string, token, "",
          "bearer token sent to plumbd (default: $PLUMBLINE_TOKEN, which "
          "keeps it out of the process list)");
ABSL_FLAG(std::string, tls_ca, "",
          "PEM CA bundle to verify plumbd's certificate; turns TLS on");
ABSL_FLAG(std::string, tls_cert, "",
          "PEM client certificate for mutual TLS (with --tls_key); turns TLS "
          "on");
ABSL_FLAG(std::string, tls_key, "", "PEM private key of --tls_cert");
// token new
ABSL_FLAG(std::string, role, "", "token new: score, admin or metrics");
ABSL_FLAG(std::string, name, "",
          "fit: the set's name; token new: who holds the token (logs), or "
          "the metrics user name");
// fit (also --csv, --out and --name)
ABSL_FLAG(std::string, target, "", "fit: column of 0/1 labels");
ABSL_FLAG(std::string, features, "",
          "fit: feature columns, comma-separated (default: all but the "
          "target, the weights and record_id)");
ABSL_FLAG(std::string, categorical, "",
          "fit: columns to treat as categorical even if numeric-looking");
ABSL_FLAG(double, l2, 0,
          "fit: L2 penalty lambda (0 = plain maximum likelihood)");
ABSL_FLAG(std::string, weights, "", "fit: column of sample weights");
ABSL_FLAG(std::string, version, "",
          "fit: version of the new set (default fit-<UTC time>); activate, "
          "approve, shadow: the version to act on");
ABSL_FLAG(std::string, actor, "",
          "load, activate, approve, shadow, rollback, refit: who acts, for "
          "the audit table (default $USER@host)");
ABSL_FLAG(std::string, reason, "",
          "load, activate, approve, shadow, rollback, refit: why, for the "
          "audit table");

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
  fit --csv FILE --target COLUMN --out SET.json --name NAME [--version V]
      [--features a,b,c] [--categorical x,y] [--l2 LAMBDA] [--weights COLUMN]
      Fit a logistic model to a CSV file (header row) by maximum likelihood
      (IRLS; with --l2, penalised on the standardised columns, lambda = 1/C
      of scikit-learn) and write it as a set file plumbd loads. Features:
      the --features columns, else every column but the target, the weights
      and record_id; a column that is not all numbers is categorical, as is
      every --categorical column; an empty cell is missing. The target holds
      0 or 1, the weights finite numbers >= 0. Prints the transforms, the
      coefficient table (estimate, standard error, z, p-value) and the fit
      statistics; per-iteration progress goes to stderr when it is a
      terminal or once the fit runs past 1 s. --version defaults to
      fit-YYYYMMDDTHHMMSSZ (UTC). On any failure nothing is written.
  versions [--set NAME]
      Every version plumbd knows (of one set), newest first: state (active,
      candidate, shadow, retired), when and by whom it was created, and why.
  load --set-file SET.json [--reason TEXT]
      Store a set file in plumbd as a candidate version (not served yet).
  approve --set NAME --version V [--reason TEXT]
      Approve a candidate: it becomes active at once (an atomic swap), the
      previously active version is retired.
  activate --set NAME --version V [--reason TEXT]
      Make any known version active (also a retired one).
  shadow --set NAME --version V [--reason TEXT]
      Score a candidate or retired version alongside the active one: its
      scores go to the ledger and its health to the metrics, never to
      callers.
  rollback --set NAME [--reason TEXT]
      Make the version that was active before the current one active again.
  refit --set NAME [--reason TEXT]
      Re-estimate the set now from the labelled records of plumbd's ledger,
      compare it with the active version on held-out records and, if it
      wins by the refit policy's margin, store it as a candidate (refit
      mode propose) or promote it (mode auto). Prints the fit and the
      comparison.
  audit --set NAME
      The set's history: loads, fits, comparisons, approvals, activations,
      rollbacks, each with time, actor and details.
      The registry commands need the admin role when access control is on;
      --actor names who acts (default $USER@host).
  token new --role score|admin [--name NAME]
      Make a bearer token for plumbd's access control: prints the token once
      and the entry (with only its salted hash) to add to
      security.access.tokens in plumbd's config. --role metrics makes a
      password for the metrics endpoint and its security.metrics_auth entry.

security (every command that dials plumbd):
  --token TOKEN   bearer token (default: $PLUMBLINE_TOKEN; prefer the
                  variable, the process list shows flags)
  --tls_ca FILE   verify plumbd's TLS certificate with this CA bundle
  --tls_cert FILE --tls_key FILE
                  client certificate and key for mutual TLS

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

int FitMain() {
  FitCommandOptions options;
  options.csv = absl::GetFlag(FLAGS_csv);
  options.columns.target = absl::GetFlag(FLAGS_target);
  options.columns.weights = absl::GetFlag(FLAGS_weights);
  options.columns.features = SplitColumnList(absl::GetFlag(FLAGS_features));
  options.columns.categorical =
      SplitColumnList(absl::GetFlag(FLAGS_categorical));
  options.l2 = absl::GetFlag(FLAGS_l2);
  options.out = absl::GetFlag(FLAGS_out);
  options.name = absl::GetFlag(FLAGS_name);
  options.version = absl::GetFlag(FLAGS_version);
  if (options.csv.empty()) return UsageError("fit needs --csv FILE");
  if (options.columns.target.empty()) {
    return UsageError("fit needs --target COLUMN");
  }
  if (options.out.empty()) return UsageError("fit needs --out SET.json");
  if (options.name.empty()) return UsageError("fit needs --name NAME");
  if (!(options.l2 >= 0) || !std::isfinite(options.l2)) {
    return UsageError("--l2 must be a finite number >= 0");
  }
  options.progress = isatty(STDERR_FILENO) ? FitProgressLines::kAlways
                                           : FitProgressLines::kAfterOneSecond;
  absl::Status s = RunFitCommand(options, std::cout, std::cerr);
  return s.ok() ? 0 : Failure(s);
}

int TokenMain(const std::vector<std::string>& args) {
  if (args.size() != 2 || args[1] != "new") {
    return UsageError("token takes one subcommand: token new --role ROLE");
  }
  TokenNewOptions options;
  options.role = absl::GetFlag(FLAGS_role);
  options.name = absl::GetFlag(FLAGS_name);
  if (options.role.empty()) {
    return UsageError("token new needs --role score, admin or metrics");
  }
  absl::Status s = RunTokenNewCommand(options, std::cout);
  if (s.code() == absl::StatusCode::kInvalidArgument) {
    return UsageError(s.message());
  }
  return s.ok() ? 0 : Failure(s);
}

// --token (or PLUMBLINE_TOKEN) and the --tls_* flags, for every command
// that dials plumbd.
absl::Status InstallClientSecurity() {
  ClientSecurity security;
  security.token = absl::GetFlag(FLAGS_token);
  if (const char* env = std::getenv("PLUMBLINE_TOKEN");
      security.token.empty() && env != nullptr) {
    security.token = env;
  }
  security.tls.ca_file = absl::GetFlag(FLAGS_tls_ca);
  security.tls.cert_file = absl::GetFlag(FLAGS_tls_cert);
  security.tls.key_file = absl::GetFlag(FLAGS_tls_key);
  return SetClientSecurity(security);
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
  if (command == "token") return TokenMain(*args);
  if (args->size() > 1) {
    return UsageError(absl::StrCat("unexpected argument '", (*args)[1], "'"));
  }
  if (command == "fit") return FitMain();
  if (absl::Status s = InstallClientSecurity(); !s.ok()) {
    return s.code() == absl::StatusCode::kInvalidArgument
               ? UsageError(s.message())
               : Failure(s);
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
  if (IsRegistryCommand(command)) {
    RegistryCommand registry;
    registry.name = command;
    registry.set = absl::GetFlag(FLAGS_set);
    registry.version = absl::GetFlag(FLAGS_version);
    registry.set_file = absl::GetFlag(FLAGS_set_file);
    registry.actor = absl::GetFlag(FLAGS_actor);
    registry.reason = absl::GetFlag(FLAGS_reason);
    if (absl::Status s = CheckRegistryFlags(registry); !s.ok()) {
      return UsageError(s.message());
    }
    absl::Status s = RunRegistryCommand(client, registry, std::cout);
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

int main(int argc, char** argv) { return plumbline::daemon::Main(argc, argv); }
