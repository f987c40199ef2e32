// File: daemon/scoring/core.h
//
// The scoring requests of plumbline.v1.Scoring answered against one compiled
// set, without any gRPC: request checks, record conversion, scoring, reason
// codes and the reply. The gRPC service looks the set up and calls these;
// plumbctl's offline mode calls the same functions on a set it read itself,
// so online and offline scores come from one code path.
//
//   absl::StatusOr<v1::ScoreBatchReply> reply =
//       ScoreBatchWithPlan(*plan, request, ScoringLimits{});
//
// The daemon also asks for each record's inputs (RecordInputs), which go to
// the ledger and the health monitor; plumbctl passes nullptr.
//
// Thread-safe: pure functions; a ScoringPlan is immutable.
#ifndef PLUMBLINE_DAEMON_SCORING_CORE_H_
#define PLUMBLINE_DAEMON_SCORING_CORE_H_

#include <cstdint>
#include <string>
#include <vector>

#include "absl/status/status.h"
#include "absl/status/statusor.h"
#include "absl/types/span.h"
#include "plumbline/v1/scoring.pb.h"
#include "scorer/scoring_plan.h"

namespace plumbline::daemon {

// Request limits; see DaemonOptions for the daemon's defaults.
struct ScoringLimits {
  // Largest number of records (or dense rows) in one batch.
  uint32_t max_batch_records = 10000;
  // Largest ReasonOptions.top a caller may ask for.
  uint32_t max_reasons = 20;
};

// The inputs of the records a call scored, in request order, as the scorer
// saw them: one row of plan.num_features() raw values per record, in the
// plan's feature order, and beside it which features the caller sent.
struct RecordInputs {
  int num_features = 0;
  // records × num_features, row-major. Text views point into the request or
  // into the plan (level names of the dense form); both must outlive this.
  std::vector<scorer::RawValue> values;
  // Same shape: 1 where the caller sent the feature (a value, null, or NaN
  // meaning missing), 0 where the record had no such key or column.
  std::vector<uint8_t> sent;

  int records() const {
    return num_features == 0 ? 0
                             : static_cast<int>(values.size()) / num_features;
  }
  absl::Span<const scorer::RawValue> Values(int record) const {
    return absl::MakeConstSpan(values).subspan(
        static_cast<size_t>(record) * num_features, num_features);
  }
  absl::Span<const uint8_t> Sent(int record) const {
    return absl::MakeConstSpan(sent).subspan(
        static_cast<size_t>(record) * num_features, num_features);
  }
};

// Checks and converts the wire reason options.
absl::StatusOr<scorer::ReasonOptions> ToReasonOptions(
    const v1::ReasonOptions& options, const ScoringLimits& limits);

// Appends the wire form of `reasons` (feature names from `plan`) to `out`.
void AppendReasons(const scorer::ScoringPlan& plan,
                   const std::vector<scorer::Reason>& reasons, v1::Scored* out);

// Scores one named record. Errors name the feature. With `inputs`, appends
// the record's row to it once it has scored (inputs->num_features must be
// plan.num_features()); `record` must then outlive `inputs`.
absl::StatusOr<v1::Scored> ScoreRecord(const scorer::ScoringPlan& plan,
                                       const v1::Record& record,
                                       const scorer::ReasonOptions& reasons,
                                       RecordInputs* inputs = nullptr);

// Score: request.set is not looked at (the caller chose `plan`). With
// `inputs` (reset here), also the record's inputs; `request` must outlive
// them.
absl::StatusOr<v1::ScoreReply> ScoreWithPlan(const scorer::ScoringPlan& plan,
                                             const v1::ScoreRequest& request,
                                             const ScoringLimits& limits,
                                             RecordInputs* inputs = nullptr);

// ScoreBatch, named or dense form; all-or-nothing. Errors on a record start
// with "records[i] (id 'x'): " or "dense.rows[i]: ". With `inputs` (reset
// here), also every record's inputs; `request` and `plan` must outlive them.
absl::StatusOr<v1::ScoreBatchReply> ScoreBatchWithPlan(
    const scorer::ScoringPlan& plan, const v1::ScoreBatchRequest& request,
    const ScoringLimits& limits, RecordInputs* inputs = nullptr);

// The ListSets entry of `plan`.
v1::SetSummary SummarizeSet(const scorer::ScoringPlan& plan);

// INVALID_ARGUMENT for an empty set name in a request, or one holding a
// control character or invalid UTF-8 (no set is named so).
absl::Status CheckSetName(const std::string& set);

// NOT_FOUND "no coefficient set named 'x' is loaded; loaded: a, b".
absl::Status SetNotFound(const std::string& set,
                         const std::vector<std::string>& loaded);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_SCORING_CORE_H_
