// File: daemon/scoring/record_conversion.h
//
// Turns a record's google.protobuf.Struct of named feature values into the
// scorer's RawValue row (one entry per feature of the set, in the set's
// order). JSON numbers become numbers, strings become text, null or an absent
// key means missing; booleans, lists and objects are refused, and so is a
// name that is not a feature of the set (a typo would otherwise silently
// become "missing").
//
// Used by the scoring service and by plumbctl's offline scoring, so both
// encode records the same way.
// Thread-safe: pure functions.
#ifndef PLUMBLINE_DAEMON_SCORING_RECORD_CONVERSION_H_
#define PLUMBLINE_DAEMON_SCORING_RECORD_CONVERSION_H_

#include <vector>

#include "absl/status/status.h"
#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"
#include "google/protobuf/struct.pb.h"
#include "scorer/scoring_plan.h"

namespace plumbline::daemon {

// Converts one value sent for `feature`. Text values view into `value`,
// which must outlive the result.
absl::StatusOr<scorer::RawValue> ValueToRawValue(
    const google::protobuf::Value& value, absl::string_view feature);

// Fills `row` (resized to plan.num_features()) from `features`. Text values
// view into `features`, which must outlive `row`. INVALID_ARGUMENT naming the
// feature for an unknown name or a refused value type.
absl::Status StructToRawValues(const scorer::ScoringPlan& plan,
                               const google::protobuf::Struct& features,
                               std::vector<scorer::RawValue>* row);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_SCORING_RECORD_CONVERSION_H_
