// File: daemon/scoring/features_json.h
//
// A record's feature values as the ledger stores them (daemon/
// ledger_entries.h FeaturesJson): one JSON object of feature name -> value
// (number, string or null). HealthMonitor parses stored records back into
// the scorer's RawValue row when it rebuilds its windows from the ledger at
// startup, through protobuf's JSON mapping (JsonStringToMessage into a
// google.protobuf.Struct): no JSON is parsed by hand.
//
//   google::protobuf::Struct holder;
//   std::vector<scorer::RawValue> row;
//   absl::Status s = ParseFeaturesJson(*plan, json, &holder, &row);
//
// Thread-safe: pure functions.
#ifndef PLUMBLINE_DAEMON_SCORING_FEATURES_JSON_H_
#define PLUMBLINE_DAEMON_SCORING_FEATURES_JSON_H_

#include <cstdint>
#include <string>
#include <vector>

#include "absl/status/status.h"
#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"
#include "absl/types/span.h"
#include "google/protobuf/struct.pb.h"
#include "scorer/scoring_plan.h"

namespace plumbline::daemon {

// Appends `v` as a JSON value: a number, a string, or null when missing
// (the one spelling FeaturesJson and StoredFeaturesJson share).
void AppendJsonValue(const scorer::RawValue& v, std::string* json);

// Parses `json` into `values` (plan.num_features() entries in the plan's
// order; absent and null features are missing). Text values view into
// `holder`, which must outlive `values`. A categorical feature given as a
// whole number in [0, levels) is read as that level (the dense form's
// code). INVALID_ARGUMENT naming the feature for: malformed JSON, a name
// that is not a feature of the plan, a boolean/list/object, text for a
// numeric or binned feature, any other number for a categorical one.
// The JSON object of one record's features in the plan's feature order, the
// form the ledger stored before schema 7 (packed_row.h now) and the form
// auditors read (StoredFeaturesJson): features with sent[f] == 0 are left
// out, missing values are null, numbers (shortest round-trip form) and
// text as they are. REQUIRES: values.size() == sent.size() ==
// plan.num_features().
//   {"distance_km":9,"region":"rural","hour":null}
std::string FeaturesJson(const scorer::ScoringPlan& plan,
                         absl::Span<const scorer::RawValue> values,
                         absl::Span<const uint8_t> sent);

absl::Status ParseFeaturesJson(const scorer::ScoringPlan& plan,
                               absl::string_view json,
                               google::protobuf::Struct* holder,
                               std::vector<scorer::RawValue>* values);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_SCORING_FEATURES_JSON_H_
