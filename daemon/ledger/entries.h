// File: daemon/ledger/entries.h
//
// What the scoring service writes to the ledger for each scored record: the
// features as a compact JSON object, and a record id when the caller sent
// none (the ledger joins outcomes by id, so every score needs one).
//
//   std::string json = FeaturesJson(plan, values, sent);
//   // {"distance_km":9,"region":"rural","hour":null}
//
// The JSON is built by hand with plain string appends because it runs on
// the request path for every record. protobuf's JSON printer
// (MessageToJsonString) on the record's google.protobuf.Struct was measured
// at 21.5 us per record against 1.1 us for this code (seven features, about
// 150 bytes; tests/bench/ledger_bench FeaturesJson/*), and the dense form
// would first have to build a Struct. Numbers are written by std::to_chars
// in its shortest form that reads back to the same double: exact on a round
// trip like %.17g, but without %.17g's noise digits (4.2 stays "4.2") and
// faster (%.17g through absl::StrAppendFormat: 1.7 us per record).
//
// Thread-safe: pure functions.
#ifndef PLUMBLINE_DAEMON_LEDGER_ENTRIES_H_
#define PLUMBLINE_DAEMON_LEDGER_ENTRIES_H_

#include <atomic>
#include <cstdint>
#include <string>

#include "absl/strings/string_view.h"
#include "absl/time/time.h"
#include "absl/types/span.h"
#include "daemon/util/set_version.h"
#include "scorer/scoring_plan.h"

namespace plumbline::daemon {

// The ScoreRole of the ledger's role column. The ledger writes only
// "active" and "shadow"; any other text reads as kShadow, so a row the
// ledger did not write can never count as the active version's.
ScoreRole RoleColumn(absl::string_view text);

// Appends `text` as a JSON string (quotes included): '"' and '\' are
// escaped, control characters become \n, \t ... or \u00XX; other bytes pass
// through (the request's strings are UTF-8 already: protobuf checks proto3
// strings when it parses them).
void AppendJsonString(absl::string_view text, std::string* out);

// Appends `x` as a JSON number, shortest round-trip form; NaN and ±inf,
// which JSON cannot hold, as null.
void AppendJsonNumber(double x, std::string* out);

// The JSON object of one record's features in the plan's feature order:
// features with sent[f] == 0 are left out, missing values are null, numbers
// and text as they are. REQUIRES: values.size() == sent.size() ==
// plan.num_features().
std::string FeaturesJson(const scorer::ScoringPlan& plan,
                         absl::Span<const scorer::RawValue> values,
                         absl::Span<const uint8_t> sent);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_LEDGER_ENTRIES_H_
