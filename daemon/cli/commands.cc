// File: daemon/cli/commands.cc
#include "daemon/cli/commands.h"

#include <algorithm>
#include <limits>
#include <string>
#include <vector>

#include "absl/strings/str_cat.h"
#include "absl/strings/str_format.h"
#include "absl/strings/str_join.h"
#include "absl/time/clock.h"
#include "daemon/cli/client.h"
#include "daemon/csv/scoring.h"
#include "daemon/scoring/core.h"
#include "daemon/scoring/set_registry.h"
#include "daemon/util/record_ids.h"
#include "google/protobuf/util/json_util.h"

namespace plumbline::daemon {
namespace {

using Table = std::vector<std::vector<std::string>>;

// Limits for offline scoring: the caller's own machine, no daemon to protect.
ScoringLimits OfflineLimits() {
  ScoringLimits limits;
  limits.max_batch_records = std::numeric_limits<uint32_t>::max();
  limits.max_reasons = std::numeric_limits<uint32_t>::max();
  return limits;
}

std::string ScoreReplyText(const v1::ScoreReply& reply, bool with_reasons) {
  const v1::Scored& score = reply.score();
  std::string text =
      FormatTable({{"set", reply.set()},
                   {"version", reply.version()},
                   {"record_id", score.record_id()},
                   {"log_odds", FormatNumber(score.log_odds())},
                   {"probability", FormatNumber(score.probability())}});
  if (with_reasons) {
    Table reasons = {{"feature", "contribution"}};
    for (const v1::Reason& reason : score.reasons()) {
      reasons.push_back(
          {reason.feature(), FormatNumber(reason.contribution())});
    }
    absl::StrAppend(&text, "reasons\n", FormatTable(reasons, "  "));
  }
  return text;
}

absl::Status PrintScoreReply(const v1::ScoreReply& reply, bool with_reasons,
                             OutputFormat format, std::ostream& out) {
  return PrintReply(
      reply, format, [&] { return ScoreReplyText(reply, with_reasons); }, out);
}

absl::Status ScoreJson(const ClientOptions& client,
                       const ScoreCommandOptions& options, std::ostream& out) {
  v1::ScoreRequest request;
  google::protobuf::util::JsonParseOptions parse_options;
  parse_options.ignore_unknown_fields = false;
  const auto parsed = google::protobuf::util::JsonStringToMessage(
      options.json, request.mutable_record()->mutable_features(),
      parse_options);
  if (!parsed.ok()) {
    return absl::InvalidArgumentError(
        absl::StrCat("--json: expected a JSON object of feature values: ",
                     parsed.message().as_string()));
  }
  request.mutable_record()->set_record_id(
      options.record_id.empty() ? RecordIdGenerator().Next("cli", absl::Now())
                                : options.record_id);
  *request.mutable_reasons() = options.reasons;
  const bool with_reasons = options.reasons.top() > 0;
  if (!options.set_file.empty()) {
    absl::StatusOr<PlanPtr> plan = LoadSetFile(options.set_file);
    if (!plan.ok()) return plan.status();
    request.set_set((*plan)->name());
    absl::StatusOr<v1::ScoreReply> reply =
        ScoreWithPlan(**plan, request, OfflineLimits());
    if (!reply.ok()) return reply.status();
    return PrintScoreReply(*reply, with_reasons, options.format, out);
  }
  request.set_set(options.set);
  ScoringClient remote(client.addr, client.timeout);
  absl::StatusOr<v1::ScoreReply> reply = remote.Score(request);
  if (!reply.ok()) return reply.status();
  return PrintScoreReply(*reply, with_reasons, options.format, out);
}

absl::Status ScoreCsv(const ClientOptions& client,
                      const ScoreCommandOptions& options, std::ostream& err) {
  CsvScoringOptions csv_options;
  csv_options.csv_path = options.csv;
  csv_options.out_path = options.out;
  csv_options.batch_size = options.batch;
  csv_options.reasons = options.reasons;
  csv_options.missing = options.missing;
  csv_options.strict = options.strict;

  absl::StatusOr<CsvScoringResult> result;
  if (!options.set_file.empty()) {
    absl::StatusOr<PlanPtr> plan = LoadSetFile(options.set_file);
    if (!plan.ok()) return plan.status();
    const ScoringLimits limits = OfflineLimits();
    const scorer::ScoringPlan& scoring_plan = **plan;
    result =
        ScoreCsvFile(csv_options, SummarizeSet(scoring_plan),
                     [&](const v1::ScoreBatchRequest& request) {
                       return ScoreBatchWithPlan(scoring_plan, request, limits);
                     });
  } else {
    ScoringClient remote(client.addr, client.timeout);
    absl::StatusOr<v1::SetSummary> schema = remote.FindSet(options.set);
    if (!schema.ok()) return schema.status();
    result = ScoreCsvFile(csv_options, *schema,
                          [&](const v1::ScoreBatchRequest& request) {
                            return remote.ScoreBatch(request);
                          });
  }
  if (!result.ok()) return result.status();
  if (!result->absent_features.empty()) {
    err << "plumbctl: note: no column for feature(s) "
        << absl::StrJoin(result->absent_features, ", ")
        << "; they were sent as missing\n";
  }
  if (result->repeats > 0) {
    err << "plumbctl: note: " << CountOf(result->repeats, "record")
        << " had been recorded before with the same id and features; "
           "plumbd returned the stored scores and recorded nothing new\n";
  }
  err << "scored " << CountOf(result->records, "record") << " in "
      << CountOf(result->batches, "batch", "batches") << "\n";
  return absl::OkStatus();
}

}  // namespace

absl::StatusOr<v1::ReasonOrder> ParseReasonOrder(const std::string& text) {
  if (text == "raises") return v1::RAISES_LOG_ODDS;
  if (text == "lowers") return v1::LOWERS_LOG_ODDS;
  if (text == "magnitude") return v1::MAGNITUDE;
  return absl::InvalidArgumentError(absl::StrCat(
      "--reason_order: '", text, "'; expected raises, lowers or magnitude"));
}

namespace {

std::string SetsText(const v1::ListSetsReply& sets, bool verbose) {
  if (sets.sets().empty()) return "no sets loaded\n";
  Table table = {{"NAME", "VERSION", "FEATURES", "SOURCE"}};
  for (const v1::SetSummary& set : sets.sets()) {
    table.push_back({set.name(), set.version(),
                     absl::StrCat(set.features_size()), set.source()});
  }
  std::string text = FormatTable(table);
  if (!verbose) return text;
  for (const v1::SetSummary& set : sets.sets()) {
    absl::StrAppend(&text, "\n", set.name(), " ", set.version());
    if (!set.description().empty()) {
      absl::StrAppend(&text, ": ", set.description());
    }
    absl::StrAppend(&text, "\n");
    Table features = {{"feature", "kind", "missing", "levels"}};
    for (const v1::FeatureSummary& feature : set.features()) {
      features.push_back(
          {feature.name(), v1::FeatureSummary::Kind_Name(feature.kind()),
           feature.missing(), absl::StrJoin(feature.levels(), ", ")});
    }
    absl::StrAppend(&text, FormatTable(features, "  "));
  }
  return text;
}

}  // namespace

absl::Status RunSetsCommand(const ClientOptions& client, bool verbose,
                            OutputFormat format, std::ostream& out) {
  ScoringClient remote(client.addr, client.timeout);
  absl::StatusOr<v1::ListSetsReply> sets = remote.ListSets();
  if (!sets.ok()) return sets.status();
  return PrintReply(
      *sets, format, [&] { return SetsText(*sets, verbose); }, out);
}

absl::Status RunScoreCommand(const ClientOptions& client,
                             const ScoreCommandOptions& options,
                             std::ostream& out, std::ostream& err) {
  if (!options.json.empty()) return ScoreJson(client, options, out);
  return ScoreCsv(client, options, err);
}

}  // namespace plumbline::daemon
