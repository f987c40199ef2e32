// File: daemon/cli/command_table.cc
//
// The table of plumbctl's commands (see command_table.h) and the helpers
// their flag declarations share. The registry commands are declared in
// registry_commands.cc.
#include "daemon/cli/command_table.h"

#include <unistd.h>

#include <algorithm>
#include <cmath>
#include <memory>

#include "absl/strings/match.h"
#include "absl/strings/numbers.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_join.h"
#include "absl/strings/str_replace.h"
#include "absl/time/time.h"
#include "daemon/cli/fit.h"
#include "daemon/cli/health.h"
#include "daemon/cli/outcomes.h"
#include "daemon/cli/registry_commands.h"
#include "daemon/cli/token.h"
#include "daemon/csv/missing.h"
#include "daemon/csv/outcomes.h"
#include "daemon/csv/training.h"

namespace plumbline::daemon {
namespace {

constexpr char kUsageErrorPayload[] = "type.plumbline/plumbctl.usage_error";

template <typename T>
using Shared = std::shared_ptr<T>;

// A status of the run, with INVALID_ARGUMENT turned into a usage error:
// for checks that find the flags wrong before anything is sent.
absl::Status AsUsage(const absl::Status& status) {
  return status.code() == absl::StatusCode::kInvalidArgument
             ? UsageError(status.message())
             : status;
}

// ---- sets

struct SetsFlags {
  bool verbose = false;
  std::string format = "text";
};

CommandRun DeclareSets(CLI::App& command) {
  auto flags = std::make_shared<SetsFlags>();
  AddSwitch(command, "verbose", &flags->verbose,
            "also list each set's features: kind, levels, missing-value rule");
  AddFormatFlag(command, &flags->format);
  return [flags](const CommandContext& context) -> absl::Status {
    absl::StatusOr<OutputFormat> format = ParseOutputFormat(flags->format);
    if (!format.ok()) return AsUsage(format.status());
    return RunSetsCommand(context.client, flags->verbose, *format,
                          *context.out);
  };
}

// ---- score

struct ScoreFlags {
  std::string set, set_file, json, csv, out, record_id, na;
  bool strict = false;
  std::string batch = "1000";
  std::string reasons = "0";
  std::string reason_order = "raises";
  std::string format = "text";
};

CommandRun DeclareScore(CLI::App& command) {
  auto flags = std::make_shared<ScoreFlags>();
  AddValueFlag(command, "set", &flags->set, "NAME",
               "score through plumbd with this loaded set");
  AddValueFlag(command, "set_file", &flags->set_file, "SET.json",
               "score offline with this set file, without plumbd (the same "
               "code path and output as through plumbd)");
  AddValueFlag(command, "json", &flags->json, "JSON",
               "one record as a JSON object of feature values");
  AddValueFlag(command, "csv", &flags->csv, "FILE",
               "a CSV file of records (header row; a record_id column is "
               "used as the ids)");
  AddValueFlag(command, "out", &flags->out, "FILE",
               "with --csv: the output file (default stdout)");
  AddValueFlag(command, "record_id", &flags->record_id, "ID",
               "with --json: the record's id (default "
               "cli-<unix microseconds>-<8 random hex digits>-1)");
  AddValueFlag(command, "na", &flags->na, "TOKEN,...",
               "with --csv: cells equal to one of these tokens are missing "
               "values, as blank cells are (default: blank cells only)");
  AddSwitch(command, "strict", &flags->strict,
            "with --csv: refuse a file that lacks a column for any feature "
            "of the set (default: such features are sent as missing, with "
            "a note)");
  AddValueFlag(command, "batch", &flags->batch, "N",
               "with --csv: records per ScoreBatch call (default 1000)");
  AddValueFlag(command, "reasons", &flags->reasons, "K",
               "reason codes per record (default 0)");
  AddValueFlag(command, "reason_order", &flags->reason_order,
               "raises|lowers|magnitude",
               "which features the reason codes list (default raises)");
  AddFormatFlag(command, &flags->format)
      ->description(
          "with --json: text (six significant digits) or json (the "
          "ScoreReply, full precision); --csv always writes full precision");
  return [flags](const CommandContext& context) -> absl::Status {
    ScoreCommandOptions options;
    options.set = flags->set;
    options.set_file = flags->set_file;
    options.json = flags->json;
    options.csv = flags->csv;
    options.out = flags->out;
    options.record_id = flags->record_id;
    if (options.set.empty() == options.set_file.empty()) {
      return UsageError("score needs exactly one of --set and --set_file");
    }
    if (options.json.empty() == options.csv.empty()) {
      return UsageError("score needs exactly one of --json and --csv");
    }
    if (!options.json.empty() && !options.out.empty()) {
      return UsageError("--out goes with --csv, not --json");
    }
    if (!options.json.empty() && (flags->strict || !flags->na.empty())) {
      return UsageError("--strict and --na go with --csv, not --json");
    }
    absl::StatusOr<MissingCells> missing = MissingCells::Parse(flags->na);
    if (!missing.ok()) return AsUsage(missing.status());
    options.missing = *std::move(missing);
    options.strict = flags->strict;
    absl::StatusOr<int> batch = ParseIntFlag("batch", flags->batch, 1);
    if (!batch.ok()) return batch.status();
    options.batch = *batch;
    absl::StatusOr<int> reasons = ParseIntFlag("reasons", flags->reasons, 0);
    if (!reasons.ok()) return reasons.status();
    absl::StatusOr<v1::ReasonOrder> order =
        ParseReasonOrder(flags->reason_order);
    if (!order.ok()) return AsUsage(order.status());
    options.reasons.set_top(static_cast<uint32_t>(*reasons));
    options.reasons.set_order(*order);
    absl::StatusOr<OutputFormat> format = ParseOutputFormat(flags->format);
    if (!format.ok()) return AsUsage(format.status());
    if (*format == OutputFormat::kJson && !options.csv.empty()) {
      return UsageError(
          "--format json goes with --json; --csv writes CSV (full precision)");
    }
    options.format = *format;
    return RunScoreCommand(context.client, options, *context.out, *context.err);
  };
}

// ---- outcomes, outcome

struct OutcomesFlags {
  std::string csv, refusals_out;
  std::string batch = "1000";
};

CommandRun DeclareOutcomes(CLI::App& command) {
  auto flags = std::make_shared<OutcomesFlags>();
  AddValueFlag(command, "csv", &flags->csv, "FILE",
               "CSV file with the columns record_id, label and optionally "
               "observed_at")
      ->required();
  AddValueFlag(command, "batch", &flags->batch, "N",
               "outcomes per ReportOutcomes call (default 1000)");
  AddValueFlag(command, "refusals_out", &flags->refusals_out, "FILE",
               "write every refused outcome to this CSV file");
  return [flags](const CommandContext& context) -> absl::Status {
    OutcomesCommandOptions options;
    absl::StatusOr<int> batch = ParseIntFlag("batch", flags->batch, 1);
    if (!batch.ok()) return batch.status();
    options.batch = *batch;
    options.refusals_out = flags->refusals_out;
    absl::StatusOr<OutcomesCsv> csv = ReadOutcomesCsv(flags->csv);
    // A file of the wrong shape is the caller's to fix, like a bad flag.
    if (!csv.ok()) return AsUsage(csv.status());
    return RunOutcomesCsvCommand(context.client, *csv, options, *context.out);
  };
}

struct OutcomeFlags {
  std::string record_id, label, observed_at;
};

CommandRun DeclareOutcome(CLI::App& command) {
  auto flags = std::make_shared<OutcomeFlags>();
  AddValueFlag(command, "record_id", &flags->record_id, "ID",
               "the id the record was scored with")
      ->required();
  AddValueFlag(command, "label", &flags->label, "0|1",
               "1 if the event happened, else 0")
      ->required();
  AddValueFlag(command, "observed_at", &flags->observed_at, "TIME",
               "when it was observed: RFC 3339 or unix seconds (default: "
               "when reported)");
  return [flags](const CommandContext& context) -> absl::Status {
    v1::Outcome outcome;
    outcome.set_record_id(flags->record_id);
    absl::StatusOr<int> label = ParseLabel(flags->label);
    if (!label.ok()) {
      return UsageError(absl::StrCat("--label: ", label.status().message()));
    }
    outcome.set_label(*label);
    if (!flags->observed_at.empty()) {
      absl::StatusOr<absl::Time> t = ParseObservedAt(flags->observed_at);
      if (!t.ok()) {
        return UsageError(
            absl::StrCat("--observed_at: ", t.status().message()));
      }
      SetObservedAt(*t, &outcome);
    }
    return RunOutcomeCommand(context.client, outcome, *context.out);
  };
}

// ---- health

struct HealthFlags {
  std::string set;
  std::string format = "text";
};

CommandRun DeclareHealth(CLI::App& command) {
  auto flags = std::make_shared<HealthFlags>();
  AddValueFlag(command, "set", &flags->set, "NAME", "a set loaded in plumbd")
      ->required();
  AddFormatFlag(command, &flags->format);
  return [flags](const CommandContext& context) -> absl::Status {
    absl::StatusOr<OutputFormat> format = ParseOutputFormat(flags->format);
    if (!format.ok()) return AsUsage(format.status());
    return RunHealthCommand(context.client, flags->set, *format, *context.out);
  };
}

// ---- fit

struct FitFlags {
  std::string csv, target, out, name, version, features, categorical, weights;
  std::string na;
  std::vector<std::string> missing;
  std::string missing_default = "reject";
  std::string l2 = "0";
};

CommandRun DeclareFit(CLI::App& command) {
  auto flags = std::make_shared<FitFlags>();
  AddValueFlag(command, "csv", &flags->csv, "FILE",
               "training data: a CSV file with a header row")
      ->required();
  AddValueFlag(command, "target", &flags->target, "COLUMN",
               "the column of 0/1 labels")
      ->required();
  AddValueFlag(command, "out", &flags->out, "SET.json", "the set file to write")
      ->required();
  AddValueFlag(command, "name", &flags->name, "NAME", "the set's name")
      ->required();
  AddValueFlag(command, "version", &flags->version, "V",
               "the set's version (default fit-YYYYMMDDTHHMMSSZ, UTC)");
  AddValueFlag(command, "features", &flags->features, "a,b,c",
               "feature columns (default: all but the target, the weights "
               "and record_id)");
  AddValueFlag(command, "categorical", &flags->categorical, "x,y",
               "columns to treat as categorical even if they hold numbers");
  AddValueFlag(command, "l2", &flags->l2, "LAMBDA",
               "L2 penalty on the standardised coefficients, lambda = 1/C of "
               "scikit-learn (default 0: plain maximum likelihood)");
  AddValueFlag(command, "weights", &flags->weights, "COLUMN",
               "a column of sample weights (finite, >= 0)");
  AddValueFlag(command, "na", &flags->na, "TOKEN,...",
               "cells equal to one of these tokens are missing values, as "
               "blank cells are (default: blank cells only)");
  command
      .add_option("--missing", flags->missing,
                  "the missing-value rule of one feature column, repeatable: "
                  "impute (mean or most frequent level), indicator (impute "
                  "plus a 0/1 column for 'was missing') or reject (a missing "
                  "cell is an error; plumbd refuses records without it)")
      ->type_name("COLUMN=RULE")
      ->take_all();
  AddValueFlag(command, "missing_default", &flags->missing_default,
               "impute|indicator|reject",
               "the missing-value rule of the other feature columns "
               "(default reject)");
  return [flags](const CommandContext& context) -> absl::Status {
    FitCommandOptions options;
    options.csv = flags->csv;
    options.columns.target = flags->target;
    options.columns.weights = flags->weights;
    options.columns.features = SplitColumnList(flags->features);
    options.columns.categorical = SplitColumnList(flags->categorical);
    absl::StatusOr<MissingCells> na = MissingCells::Parse(flags->na);
    if (!na.ok()) return AsUsage(na.status());
    options.columns.missing = *std::move(na);
    for (const std::string& text : flags->missing) {
      auto rule = ParseColumnMissingRule(text);
      if (!rule.ok()) return AsUsage(rule.status());
      options.columns.missing_rules.push_back(*std::move(rule));
    }
    absl::StatusOr<v1::MissingRule::Kind> missing_default =
        ParseMissingRule("--missing_default", flags->missing_default);
    if (!missing_default.ok()) return AsUsage(missing_default.status());
    options.columns.missing_default = *missing_default;
    options.out = flags->out;
    options.name = flags->name;
    options.version = flags->version;
    if (!absl::SimpleAtod(flags->l2, &options.l2) || !(options.l2 >= 0) ||
        !std::isfinite(options.l2)) {
      return UsageError(
          absl::StrCat("--l2: '", flags->l2, "' is not a finite number >= 0"));
    }
    options.progress = isatty(STDERR_FILENO)
                           ? FitProgressLines::kAlways
                           : FitProgressLines::kAfterOneSecond;
    return RunFitCommand(options, *context.out, *context.err);
  };
}

// ---- token new

struct TokenFlags {
  std::string role, name;
};

CommandRun DeclareTokenNew(CLI::App& command) {
  auto flags = std::make_shared<TokenFlags>();
  AddValueFlag(command, "role", &flags->role, "score|admin|metrics",
               "what the token may do; metrics makes a password for the "
               "metrics endpoint")
      ->required();
  AddValueFlag(command, "name", &flags->name, "NAME",
               "who holds the token (plumbd's logs), or the metrics user "
               "name");
  return [flags](const CommandContext& context) -> absl::Status {
    TokenNewOptions options;
    options.role = flags->role;
    options.name = flags->name;
    return AsUsage(RunTokenNewCommand(options, *context.out));
  };
}

std::vector<CommandSpec> MakeTable() {
  std::vector<CommandSpec> table;
  table.push_back(
      {.path = {"sets"},
       .summary = "list the coefficient sets plumbd has loaded",
       .description =
           "Lists the coefficient sets plumbd has loaded: name, version, "
           "number of features and the file each came from. --verbose adds "
           "each feature's kind, levels and missing-value rule; --format "
           "json prints the ListSetsReply, features included.",
       .declare = DeclareSets});
  table.push_back(
      {.path = {"score"},
       .summary = "score one record or a CSV file, through plumbd or offline",
       .description =
           "Scores one record (--json) or a CSV file (--csv) through plumbd "
           "(--set) or offline with a set file (--set_file, without plumbd; "
           "the same code path gives the same output).\n"
           "--csv sends the rows in batches of N and writes the input "
           "columns plus record_id, log_odds, probability and "
           "reason_1..reason_K, in full precision. Rows without a record_id "
           "get <file stem>-<unix microseconds>-<8 random hex digits>-<n>. "
           "--json prints the score to six significant digits, or with "
           "--format json the ScoreReply in full precision.\n"
           "--csv is resumable, not all-or-nothing. Before the first call "
           "the whole file is checked against the set's features: the CSV "
           "itself, the header (no column that is a feature, or with "
           "--strict any feature without a column, is refused), every "
           "cell, and record ids repeated within the file; any of these "
           "fails with nothing sent or written. What only plumbd can decide "
           "(an id its ledger holds with other features, a level the set "
           "refuses, a lost connection) fails a batch: then the rows scored "
           "before it are written to --out and every row from that batch on "
           "to OUT.refused.csv (or FILE.refused.csv with no --out) with the "
           "columns row, record_id, error and the input's own, exit status "
           "1. Fix the refused rows and score that file to resume: the ids "
           "are kept, and a row plumbd had recorded already comes back as a "
           "repeat (stored score, counted in a note), never twice.",
       .usage = {"(--set NAME | --set_file SET.json) --json '{\"feature\": "
                 "value, ...}' [--record_id ID] [--reasons K] "
                 "[--reason_order raises|lowers|magnitude] [--format "
                 "text|json]",
                 "(--set NAME | --set_file SET.json) --csv FILE [--out FILE] "
                 "[--batch N] [--na TOKEN,...] [--strict] [--reasons K] "
                 "[--reason_order raises|lowers|magnitude]"},
       .declare = DeclareScore});
  table.push_back(
      {.path = {"outcomes"},
       .summary = "report the outcomes of a CSV file",
       .description =
           "Reports outcomes from a CSV file with the columns record_id, "
           "label (0 or 1) and optionally observed_at (RFC 3339 or unix "
           "seconds), in batches of N. Prints \"accepted N, refused M\" and "
           "the first refusals; --refusals_out writes them all. Refusals are "
           "results: the exit status is 0 unless a call fails.",
       .declare = DeclareOutcomes});
  table.push_back({.path = {"outcome"},
                   .summary = "report one outcome",
                   .description = "Reports the outcome of one scored record.",
                   .declare = DeclareOutcome});
  table.push_back(
      {.path = {"health"},
       .summary = "the model health of one set: drift state, reasons, figures",
       .description =
           "The set's model health as plumbd's monitor last evaluated it: "
           "the drift state (steady, watch, drifting) and why, the figures "
           "of the count and time windows (log-loss, Brier score, AUC, "
           "calibration, Hosmer-Lemeshow, score PSI) and per feature the "
           "PSI, missing and out-of-range rates, to six significant digits. "
           "--format json prints the SetHealth message in full precision.",
       .declare = DeclareHealth});
  table.push_back(
      {.path = {"fit"},
       .summary = "fit a set to a CSV file by maximum likelihood",
       .description =
           "Fits a logistic model to a CSV file (header row) by maximum "
           "likelihood (IRLS; with --l2, penalised on the standardised "
           "columns, lambda = 1/C of scikit-learn) and writes it as a set "
           "file plumbd loads. A blank cell, or one equal to an --na token, "
           "is missing. A column whose present cells are all numbers is "
           "numeric; one with under 90% numbers is categorical, as is every "
           "--categorical column; a column in between is refused, naming "
           "the cells that are not numbers (pass them to --na, or use "
           "--categorical). Nothing is guessed about missing values: each "
           "feature's rule is --missing COLUMN=RULE or --missing_default "
           "(impute, indicator or reject; default reject, which refuses a "
           "file with a missing cell in that column, naming its rows), and "
           "the rule goes into the set. The target holds 1, 1.0 or true and "
           "0, 0.0 or false. A table of missing cells per column goes to "
           "stderr. Prints the transforms, the coefficient table "
           "(estimate, standard error, z, p-value) and the fit statistics; "
           "per-iteration progress goes to stderr when it is a terminal or "
           "once the fit runs past 1 s. On any failure nothing is written. "
           "Works offline.",
       .dials = false,
       .declare = DeclareFit});
  AppendRegistryCommands(&table);
  table.push_back(
      {.path = {"token", "new"},
       .summary = "make a bearer token or metrics password for plumbd",
       .description =
           "Makes a bearer token for plumbd's access control: prints the "
           "token once and the entry (with only its salted hash) to add to "
           "security.access.tokens in plumbd's config. --role metrics makes "
           "a password for the metrics endpoint and its "
           "security.metrics_auth entry. Works offline; restart plumbd to "
           "use the new entry.",
       .dials = false,
       .declare = DeclareTokenNew});
  return table;
}

}  // namespace

const std::vector<CommandSpec>& PlumbctlCommands() {
  static const auto* table = new std::vector<CommandSpec>(MakeTable());
  return *table;
}

std::string CommandName(const CommandSpec& spec) {
  return absl::StrJoin(spec.path, " ");
}

CLI::Option* AddValueFlag(CLI::App& command, absl::string_view name,
                          std::string* value, absl::string_view value_name,
                          absl::string_view help) {
  std::string names = absl::StrCat("--", name);
  if (absl::StrContains(name, '_')) {
    absl::StrAppend(&names, ",--", absl::StrReplaceAll(name, {{"_", "-"}}));
  }
  return command.add_option(names, *value, std::string(help))
      ->type_name(std::string(value_name))
      ->multi_option_policy(CLI::MultiOptionPolicy::TakeLast);
}

CLI::Option* AddSwitch(CLI::App& command, absl::string_view name, bool* value,
                       absl::string_view help) {
  std::string names = absl::StrCat("--", name);
  if (absl::StrContains(name, '_')) {
    absl::StrAppend(&names, ",--", absl::StrReplaceAll(name, {{"_", "-"}}));
  }
  return command.add_flag(names, *value, std::string(help))
      ->multi_option_policy(CLI::MultiOptionPolicy::TakeLast);
}

CLI::Option* AddFormatFlag(CLI::App& command, std::string* value) {
  return AddValueFlag(command, "format", value, "text|json",
                      "text (default: tables, six significant digits) or "
                      "json (one JSON document, full precision)");
}

absl::Status UsageError(absl::string_view message) {
  absl::Status status = absl::InvalidArgumentError(message);
  status.SetPayload(kUsageErrorPayload, absl::Cord("1"));
  return status;
}

bool IsUsageError(const absl::Status& status) {
  return status.GetPayload(kUsageErrorPayload).has_value();
}

absl::StatusOr<int> ParseIntFlag(absl::string_view flag,
                                 const std::string& text, int min) {
  int value = 0;
  if (!absl::SimpleAtoi(text, &value)) {
    return UsageError(
        absl::StrCat("--", flag, ": '", text, "' is not a whole number"));
  }
  if (value < min) {
    return UsageError(absl::StrCat("--", flag, " must be >= ", min));
  }
  return value;
}

}  // namespace plumbline::daemon
