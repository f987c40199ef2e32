// File: daemon/scoring/core.cc
#include "daemon/scoring/core.h"

#include <optional>
#include <utility>

#include "absl/strings/str_cat.h"
#include "absl/strings/str_join.h"
#include "daemon/scoring/dense.h"
#include "daemon/scoring/record_conversion.h"
#include "daemon/util/caller_text.h"

namespace plumbline::daemon {
namespace {

absl::Status Prefixed(absl::string_view prefix, const absl::Status& status) {
  return absl::Status(status.code(), absl::StrCat(prefix, status.message()));
}

void ResetInputs(const scorer::ScoringPlan& plan, int records,
                 RecordInputs* inputs) {
  if (inputs == nullptr) return;
  inputs->num_features = plan.num_features();
  inputs->values.clear();
  inputs->sent.clear();
  inputs->values.reserve(static_cast<size_t>(records) * plan.num_features());
  inputs->sent.reserve(static_cast<size_t>(records) * plan.num_features());
}

}  // namespace

absl::StatusOr<scorer::ReasonOptions> ToReasonOptions(
    const v1::ReasonOptions& options, const ScoringLimits& limits) {
  if (options.top() > limits.max_reasons) {
    return absl::InvalidArgumentError(
        absl::StrCat("reasons.top: ", options.top(), " is over the limit of ",
                     limits.max_reasons, " (max_reasons)"));
  }
  scorer::ReasonOptions out;
  out.top = static_cast<int>(options.top());
  switch (options.order()) {
    case v1::RAISES_LOG_ODDS:
      out.order = scorer::ReasonOrder::kRaisesLogOdds;
      break;
    case v1::LOWERS_LOG_ODDS:
      out.order = scorer::ReasonOrder::kLowersLogOdds;
      break;
    case v1::MAGNITUDE:
      out.order = scorer::ReasonOrder::kMagnitude;
      break;
    default:
      return absl::InvalidArgumentError(absl::StrCat(
          "reasons.order: unknown value ", static_cast<int>(options.order())));
  }
  return out;
}

void AppendReasons(const scorer::ScoringPlan& plan,
                   const std::vector<scorer::Reason>& reasons,
                   v1::Scored* out) {
  for (const scorer::Reason& reason : reasons) {
    v1::Reason* wire = out->add_reasons();
    wire->set_feature(plan.feature_name(reason.feature));
    wire->set_contribution(reason.contribution);
  }
}

absl::StatusOr<v1::Scored> ScoreRecord(const scorer::ScoringPlan& plan,
                                       const v1::Record& record,
                                       const scorer::ReasonOptions& reasons,
                                       RecordInputs* inputs) {
  std::vector<scorer::RawValue> row;
  if (absl::Status s = StructToRawValues(plan, record.features(), &row);
      !s.ok()) {
    return s;
  }
  absl::StatusOr<scorer::ScoreResult> result = plan.Score(row, reasons);
  if (!result.ok()) return result.status();
  v1::Scored scored;
  scored.set_record_id(record.record_id());
  scored.set_log_odds(result->log_odds);
  scored.set_probability(result->probability);
  AppendReasons(plan, result->reasons, &scored);
  if (inputs != nullptr) {
    inputs->values.insert(inputs->values.end(), row.begin(), row.end());
    const size_t first = inputs->sent.size();
    inputs->sent.resize(first + row.size(), 0);
    // Every key is a feature of the plan: StructToRawValues refused others.
    for (const auto& [name, value] : record.features().fields()) {
      inputs->sent[first + static_cast<size_t>(plan.FeatureIndex(name))] = 1;
    }
  }
  return scored;
}

absl::StatusOr<v1::ScoreReply> ScoreWithPlan(const scorer::ScoringPlan& plan,
                                             const v1::ScoreRequest& request,
                                             const ScoringLimits& limits,
                                             RecordInputs* inputs) {
  absl::StatusOr<scorer::ReasonOptions> reasons =
      ToReasonOptions(request.reasons(), limits);
  if (!reasons.ok()) return reasons.status();
  ResetInputs(plan, 1, inputs);
  absl::StatusOr<v1::Scored> scored =
      ScoreRecord(plan, request.record(), *reasons, inputs);
  if (!scored.ok()) return scored.status();
  v1::ScoreReply reply;
  reply.set_set(plan.name());
  reply.set_version(plan.version());
  *reply.mutable_score() = *std::move(scored);
  return reply;
}

absl::StatusOr<v1::ScoreBatchReply> ScoreBatchWithPlan(
    const scorer::ScoringPlan& plan, const v1::ScoreBatchRequest& request,
    const ScoringLimits& limits, RecordInputs* inputs) {
  const int named = request.records_size();
  const int dense = request.dense().rows_size();
  if (named > 0 && dense > 0) {
    return absl::InvalidArgumentError(
        absl::StrCat("records (", named, ") and dense.rows (", dense,
                     ") are both given; send the batch in exactly one form"));
  }
  if (named == 0 && dense == 0) {
    return absl::InvalidArgumentError(
        "empty batch: neither records nor dense.rows holds a row");
  }
  const int count = named + dense;
  if (static_cast<uint32_t>(count) > limits.max_batch_records) {
    return absl::InvalidArgumentError(absl::StrCat(
        "batch has ", count, " records, over the limit of ",
        limits.max_batch_records, " (max_batch_records); split it"));
  }
  absl::StatusOr<scorer::ReasonOptions> reasons =
      ToReasonOptions(request.reasons(), limits);
  if (!reasons.ok()) return reasons.status();

  ResetInputs(plan, count, inputs);
  v1::ScoreBatchReply reply;
  reply.set_set(plan.name());
  reply.set_version(plan.version());
  if (dense > 0) {
    if (absl::Status s =
            ScoreDenseRows(plan, request.dense(), *reasons, &reply, inputs);
        !s.ok()) {
      return s;
    }
    return reply;
  }
  reply.mutable_scores()->Reserve(named);
  for (int i = 0; i < named; ++i) {
    const v1::Record& record = request.records(i);
    absl::StatusOr<v1::Scored> scored =
        ScoreRecord(plan, record, *reasons, inputs);
    if (!scored.ok()) {
      return Prefixed(absl::StrCat("records[", i, "] (id '",
                                   CallerText(record.record_id()), "'): "),
                      scored.status());
    }
    *reply.add_scores() = *std::move(scored);
  }
  return reply;
}

v1::SetSummary SummarizeSet(const scorer::ScoringPlan& plan) {
  v1::SetSummary summary;
  summary.set_name(plan.name());
  summary.set_version(plan.version());
  summary.set_description(plan.set().description());
  summary.set_source(plan.source());
  for (const v1::Feature& feature : plan.set().features()) {
    v1::FeatureSummary* out = summary.add_features();
    out->set_name(feature.name());
    switch (feature.transform_case()) {
      case v1::Feature::kNumeric:
        out->set_kind(v1::FeatureSummary::NUMERIC);
        break;
      case v1::Feature::kCategorical:
        out->set_kind(v1::FeatureSummary::CATEGORICAL);
        for (const auto& level : feature.categorical().levels()) {
          out->add_levels(level.value());
        }
        break;
      case v1::Feature::kBinned:
        out->set_kind(v1::FeatureSummary::BINNED);
        break;
      default:
        out->set_kind(v1::FeatureSummary::KIND_UNSPECIFIED);
        break;
    }
    out->set_missing(v1::MissingRule::Kind_Name(feature.missing().kind()));
  }
  return summary;
}

absl::Status CheckSetName(const std::string& set) {
  if (set.empty()) {
    return absl::InvalidArgumentError(
        "set: empty; name the coefficient set to score against (ListSets "
        "shows the loaded ones)");
  }
  // No set is named so (set names are letters, digits, '_', '-', '.').
  if (const std::optional<size_t> at = FirstUnprintable(set)) {
    return absl::InvalidArgumentError(
        absl::StrCat("set: '", CallerText(set),
                     "' holds a control character or a byte that is not "
                     "UTF-8 at byte ",
                     *at));
  }
  return absl::OkStatus();
}

absl::Status SetNotFound(const std::string& set,
                         const std::vector<std::string>& loaded) {
  return absl::NotFoundError(absl::StrCat(
      "no coefficient set named '", CallerText(set), "' is loaded; loaded: ",
      loaded.empty() ? "none" : absl::StrJoin(loaded, ", ")));
}

}  // namespace plumbline::daemon
