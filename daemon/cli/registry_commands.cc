// File: daemon/cli/registry_commands.cc
#include "daemon/cli/registry_commands.h"

#include <memory>
#include <string>

#include "absl/strings/numbers.h"
#include "absl/strings/str_cat.h"
#include "daemon/cli/registry.h"
#include "daemon/cli/review.h"

namespace plumbline::daemon {
namespace {

struct RegistryFlags {
  std::string set, version, set_file, actor, reason;
  std::string format = "text";
  bool allow_schema_change = false;
};

// Which flags a registry command takes beyond --set.
struct RegistryShape {
  bool set_required = true;  // versions: --set is optional
  bool version = false;      // activate, approve, shadow
  bool set_file = false;     // load (and no --set)
  bool changes = true;       // --actor and --reason (not versions, audit)
  bool schema = false;       // --allow_schema_change (load, activate, ...)
};

std::function<CommandRun(CLI::App&)> Declare(std::string name,
                                             RegistryShape shape) {
  return [name, shape](CLI::App& command) -> CommandRun {
    auto flags = std::make_shared<RegistryFlags>();
    if (shape.set_file) {
      AddValueFlag(command, "set_file", &flags->set_file, "SET.json",
                   "the set file to store as a candidate")
          ->required();
    } else {
      CLI::Option* set =
          AddValueFlag(command, "set", &flags->set, "NAME",
                       shape.set_required ? "the set" : "only this set");
      if (shape.set_required) set->required();
    }
    if (shape.version) {
      AddValueFlag(command, "version", &flags->version, "VERSION",
                   "the version to act on")
          ->required();
    }
    if (shape.changes) {
      AddValueFlag(command, "reason", &flags->reason, "TEXT",
                   "why, for the audit table");
      AddValueFlag(command, "actor", &flags->actor, "WHO",
                   "who acts, for the audit table (default $USER@host)");
    } else {
      AddFormatFlag(command, &flags->format);
    }
    if (shape.schema) {
      AddSwitch(command, "allow_schema_change", &flags->allow_schema_change,
                "serve it although calls valid for the active version would "
                "fail or change meaning (each difference goes to the audit)");
    }
    return [name, flags](const CommandContext& context) -> absl::Status {
      RegistryCommand registry;
      registry.name = name;
      registry.set = flags->set;
      registry.version = flags->version;
      registry.set_file = flags->set_file;
      registry.actor = flags->actor;
      registry.reason = flags->reason;
      registry.allow_schema_change = flags->allow_schema_change;
      absl::StatusOr<OutputFormat> format = ParseOutputFormat(flags->format);
      if (!format.ok()) return UsageError(format.status().message());
      registry.format = *format;
      if (absl::Status s = CheckRegistryFlags(registry); !s.ok()) {
        return UsageError(s.message());
      }
      return RunRegistryCommand(context.client, registry, *context.out);
    };
  };
}

constexpr char kAdminNote[] =
    "\nNeeds the admin role when plumbd's access control is on.";

}  // namespace

void AppendRegistryCommands(std::vector<CommandSpec>* table) {
  table->push_back(
      {.path = {"versions"},
       .summary = "every version plumbd knows, with its state and history",
       .description =
           std::string("Every version plumbd knows (of one set with "
                       "--set), newest first: state (active, candidate, "
                       "shadow, retired), when and by whom it was "
                       "created, and why. --format json prints the "
                       "ListVersionsReply.") +
           kAdminNote,
       .declare =
           Declare("versions", {.set_required = false, .changes = false})});
  table->push_back(
      {.path = {"load"},
       .summary = "store a set file in plumbd as a candidate",
       .description =
           std::string("Stores a set file in plumbd as a candidate version: "
                       "known to the ledger, not served until approved or "
                       "activated.") +
           kAdminNote,
       .declare = Declare("load", {.set_file = true, .schema = true})});
  table->push_back(
      {.path = {"approve"},
       .summary = "approve a candidate: it becomes active",
       .description =
           std::string("Approves a candidate: it becomes active at once "
                       "(an atomic swap), the previously active version "
                       "is retired.") +
           kAdminNote,
       .declare = Declare("approve", {.version = true, .schema = true})});
  table->push_back(
      {.path = {"activate"},
       .summary = "make any known version active",
       .description =
           std::string("Makes any known version active, also a retired "
                       "one.") +
           kAdminNote,
       .declare = Declare("activate", {.version = true, .schema = true})});
  table->push_back(
      {.path = {"shadow"},
       .summary = "score a version beside the active one, never returned",
       .description =
           std::string("Scores a candidate or retired version alongside "
                       "the active one: its scores go to the ledger and "
                       "its health to the metrics, never to callers.") +
           kAdminNote,
       .declare = Declare("shadow", {.version = true, .schema = true})});
  table->push_back(
      {.path = {"rollback"},
       .summary = "make the previously active version active again",
       .description =
           std::string("Makes the version that was active before the "
                       "current one active again.") +
           kAdminNote,
       .declare = Declare("rollback", {})});
  table->push_back(
      {.path = {"refit"},
       .summary = "re-estimate a set now from the ledger's labelled records",
       .description =
           std::string(
               "Re-estimates the set now from the most recent labelled "
               "records of plumbd's ledger along the updating ladder "
               "(intercept recalibration, logistic recalibration, ridge "
               "toward the active coefficients, full re-estimation; "
               "likelihood-ratio tests choose the rung), compares the "
               "chosen candidate with the active version on the latest "
               "records (the out-of-time holdout) and, if it wins by the "
               "refit policy's margin, stores it as a candidate (refit mode "
               "propose) or promotes it (mode auto). Prints the fit, the "
               "comparison and the ladder: every rung's log-likelihood, "
               "df, likelihood-ratio statistic and p-value, the closed "
               "test and the rung chosen. "
               "Waits up to 10 minutes (or --timeout_ms if longer).") +
           kAdminNote,
       .declare = Declare("refit", {})});
  table->push_back(
      {.path = {"audit"},
       .summary = "a set's history: loads, fits, approvals, rollbacks",
       .description =
           std::string("The set's history: loads, fits, comparisons, "
                       "approvals, activations, rollbacks, each with "
                       "time, version, actor and details. --format json "
                       "prints the AuditReply.") +
           kAdminNote,
       .declare = Declare("audit", {.changes = false})});
  AppendReviewCommands(table);
}

void AppendReviewCommands(std::vector<CommandSpec>* table) {
  // show, diff, dossier: daemon/cli/review.h.
  auto declare = [](std::string name) {
    return [name](CLI::App& command) -> CommandRun {
      auto c = std::make_shared<ReviewCommand>();
      c->name = name;
      auto format = std::make_shared<std::string>("text");
      auto job = std::make_shared<std::string>();
      AddValueFlag(command, "set", &c->set, "NAME", "the set")->required();
      if (name == "show") {
        AddValueFlag(command, "version", &c->version, "VERSION",
                     "the version to show (default: the active one)");
      } else if (name == "diff") {
        AddValueFlag(command, "from", &c->from, "VERSION",
                     "the version to compare from (default: the active one)");
        AddValueFlag(command, "to", &c->to, "VERSION",
                     "the version to compare to (default: the newest "
                     "candidate)");
      } else if (name == "record") {
        AddValueFlag(command, "record_id", &c->record_id, "ID",
                     "the record's id")
            ->required();
      } else {
        AddValueFlag(command, "job", job.get(), "N",
                     "the refit job (default: the set's latest)");
        AddValueFlag(command, "out", &c->out, "FILE.html",
                     "where to write the dossier (needed unless --format "
                     "json prints its data)");
      }
      AddFormatFlag(command, format.get());
      return [c, format, job](const CommandContext& context) -> absl::Status {
        absl::StatusOr<OutputFormat> f = ParseOutputFormat(*format);
        if (!f.ok()) return UsageError(f.status().message());
        c->json = *f == OutputFormat::kJson;
        if (!job->empty() && !absl::SimpleAtoi(*job, &c->job)) {
          return UsageError(
              absl::StrCat("--job: '", *job, "' is not a job number"));
        }
        if (absl::Status s = CheckReviewFlags(*c); !s.ok()) {
          return UsageError(s.message());
        }
        return RunReviewCommand(context.client, *c, *context.out);
      };
    };
  };
  table->push_back(
      {.path = {"show"},
       .summary = "one version: transforms, coefficients, fit, provenance",
       .description =
           std::string("Shows one version of a set (the active one by "
                       "default): every feature's transform and "
                       "coefficients with standard errors when Plumbline "
                       "fitted it, the fit statistics and where the version "
                       "came from. --format json prints the VersionDetail.") +
           kAdminNote,
       .declare = declare("show")});
  table->push_back(
      {.path = {"diff"},
       .summary = "two versions side by side, feature by feature",
       .description =
           std::string("Lines up two versions of a set feature by feature "
                       "(by default the active version against the newest "
                       "candidate): coefficient, change, change in standard "
                       "errors, transforms and levels added or dropped, "
                       "baseline shifts, and the holdout comparison when "
                       "the candidate came from a refit. --format json "
                       "prints the VersionDiff.") +
           kAdminNote,
       .declare = declare("diff")});
  table->push_back(
      {.path = {"dossier"},
       .summary = "write a refit job's dossier (one HTML file) to --out",
       .description =
           std::string("Writes the dossier of a refit job (the set's latest "
                       "by default) to --out: one self-contained HTML file, "
                       "readable offline and printable, with the trigger, "
                       "the data, the coefficients and their changes, the "
                       "holdout comparison, pictures and the approval "
                       "trail.") +
           kAdminNote,
       .declare = declare("dossier")});
  table->push_back(
      {.path = {"record"},
       .summary = "what the ledger keeps of one record",
       .description =
           std::string("Shows one record as the ledger holds it: every score "
                       "the set recorded under the id (the active version's "
                       "and its shadows', with version, time, log-odds and "
                       "probability), the features as they were scored, by "
                       "name, and the outcome when one was reported. "
                       "--format json prints the RecordDetail.") +
           kAdminNote,
       .declare = declare("record")});
}

}  // namespace plumbline::daemon
